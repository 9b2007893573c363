// The command line where the world is not as expected: a reader that goes away, folders that
// cannot be written, options that are wrong, runs that partly fail. End to end: each test spawns
// the built command as a user would.
import { beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { CLI, ROOT, runCli } from './support/cli.js';

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-robust-'));
const noStack = /\bat .*\.js:\d+|node:internal|Unhandled/;

/** 4 sites x 2 levels: tiny points, yet 480 of them (or 401 times) print more than a pipe holds (64 KiB). */
const SMALL = `
[chain]
sites = 4
[levels]
count = 2
tunnelling = 0.5
[exchange]
strength = 1.0
[solve]
states = 2
`;
const SCAN = `${SMALL}
[[scan.axis]]
key = "exchange.strength"
from = 0.5
to = 2
steps = 40
[[scan.axis]]
key = "levels.tunnelling"
values = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2]
`;
const EVOLVE = `${SMALL}
[evolve]
times = { from = 0, to = 4, steps = 400 }
`;

/** Runs `rungchain ARGS | READER` in bash with pipefail; returns the pipeline's status and rungchain's stderr. */
function piped(args: string[], reader: string): { status: number | null; stderr: string } {
  const quote = (s: string) => `'${s.replace(/'/g, `'\\''`)}'`;
  const command = `set -o pipefail; ${quote(process.execPath)} ${quote(CLI)} ${args.map(quote).join(' ')} | ${reader} > /dev/null`;
  const r = spawnSync('bash', ['-c', command], { cwd: ROOT, encoding: 'utf8', timeout: 120_000 });
  return { status: r.status, stderr: r.stderr };
}

let scanRun = '';
let evolveRun = '';
beforeAll(() => {
  const dir = tmp();
  writeFileSync(path.join(dir, 'scan.toml'), SCAN);
  writeFileSync(path.join(dir, 'evolve.toml'), EVOLVE);
  scanRun = path.join(dir, 'scan-run');
  evolveRun = path.join(dir, 'evolve-run');
  expect(runCli(['scan', path.join(dir, 'scan.toml'), '--out', scanRun, '--workers', '1', '--quiet']).code).toBe(0);
  expect(runCli(['evolve', path.join(dir, 'evolve.toml'), '--out', evolveRun, '--quiet', '--json']).code).toBe(0);
});

describe('a reader that closes the pipe early', () => {
  // Common practice for Unix filters: when the reader has what it wants (`head`), the writer stops
  // without a message. rungchain exits 0, so a pipeline under `set -o pipefail` still succeeds.
  it.each([
    ['summary --json | head -c 50', () => ['summary', scanRun, '--json'], 'head -c 50'],
    ['summary --long --csv | head -2', () => ['summary', scanRun, '--long', '--csv'], 'head -2'],
    ['summary (table) | head -1', () => ['summary', scanRun], 'head -1'],
    ['trace --json | head -c 100', () => ['trace', evolveRun, '--json'], 'head -c 100'],
    ['trace --long | head -c 10', () => ['trace', evolveRun, '--long'], 'head -c 10'],
  ])('%s: exit 0, nothing on stderr', (_name, args, reader) => {
    const r = piped(args(), reader);
    expect(r.stderr).not.toMatch(noStack);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
  });
});
