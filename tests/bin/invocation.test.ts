// How printed commands start: the way this program can be started from where the user stands
// (common practice for tools that print a command to rerun: it must work when pasted).
import { afterEach, describe, expect, it } from 'vitest';
import { chmodSync, mkdirSync, mkdtempSync, symlinkSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { commandLine, invocation } from '../../bin/invocation.js';
import { CLI, ROOT } from '../support/cli.js';

const saved = { argv1: process.argv[1], path: process.env.PATH, npm: process.env.npm_command, cwd: process.cwd() };
afterEach(() => {
  process.argv[1] = saved.argv1;
  process.env.PATH = saved.path;
  if (saved.npm === undefined) delete process.env.npm_command;
  else process.env.npm_command = saved.npm;
  process.chdir(saved.cwd);
});

/** A folder holding `rungchain` as a link to the built command line, as npm link or npx makes one. */
function binWithLink(...segments: string[]): string {
  const bin = path.join(mkdtempSync(path.join(os.tmpdir(), 'rungchain-bin-')), ...segments);
  mkdirSync(bin, { recursive: true });
  // npm link and npx make the linked script executable; tsc alone writes it without the bit.
  chmodSync(CLI, 0o755);
  symlinkSync(CLI, path.join(bin, 'rungchain'));
  return bin;
}

describe('the start of a printed command', () => {
  it('from a clone after npm install (no rungchain on PATH): node and the script, relative to here', () => {
    delete process.env.npm_command;
    process.env.PATH = path.dirname(process.execPath);
    process.argv[1] = CLI;
    process.chdir(ROOT);
    expect(invocation()).toBe('node dist/bin/rungchain.js');
    // A fresh folder is never an ancestor of the clone, wherever the clone lies (CI may clone under the temp folder).
    process.chdir(mkdtempSync(path.join(os.tmpdir(), 'rungchain-elsewhere-')));
    expect(invocation()).toBe(`node ${CLI}`);
    expect(commandLine(['summary', 'runs/my run'])).toBe(`node ${CLI} summary 'runs/my run'`);
  });

  it('with this very program on PATH (npm link, a global install): plainly rungchain', () => {
    delete process.env.npm_command;
    const bin = binWithLink('bin');
    process.env.PATH = [bin, path.dirname(process.execPath)].join(path.delimiter);
    process.argv[1] = path.join(bin, 'rungchain');
    expect(invocation()).toBe('rungchain');
  });

  it('under npx: npx rungchain, although npx put its own .bin (with rungchain) on PATH', () => {
    const bin = binWithLink('_npx', 'node_modules', '.bin');
    process.env.npm_command = 'exec';
    process.env.PATH = [bin, path.dirname(process.execPath)].join(path.delimiter);
    process.argv[1] = path.join(bin, 'rungchain');
    expect(invocation()).toBe('npx rungchain');
  });

  it('outside the command line (a library call): rungchain', () => {
    process.argv[1] = '/somewhere/vitest.mjs';
    expect(invocation()).toBe('rungchain');
  });
});
