// Runs the built command line (dist/) as a user would, capturing both streams and the exit code.
import { spawnSync } from 'node:child_process';
import { fileURLToPath, pathToFileURL } from 'node:url';
import path from 'node:path';

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const CLI = path.join(ROOT, 'dist/bin/rungchain.js');
/**
 * Node options that preload the test faults (tests/support/faults.mjs) into the command line and its
 * worker threads: spawn `[...FAULTS, CLI, ...args]` with the RUNGCHAIN_TEST_* variables that name them.
 */
export const FAULTS = ['--import', pathToFileURL(path.join(ROOT, 'tests/support/faults.mjs')).href];

export function runCli(args: string[], options: { cwd?: string; timeout?: number } = {}) {
  const r = spawnSync(process.execPath, [CLI, ...args], {
    cwd: options.cwd ?? ROOT,
    encoding: 'utf8',
    timeout: options.timeout ?? 120_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
