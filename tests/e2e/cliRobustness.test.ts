// The command line where the world is not as expected: a reader that goes away, folders that
// cannot be written, options that are wrong, runs that partly fail. End to end: each test spawns
// the built command as a user would.
import { beforeAll, describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { CLI, FAULTS, ROOT, runCli } from '../support/cli.js';
import { loadEvolveRun } from '../../src/dynamics/evolveRun.js';
import { readRun } from '../../src/runs/runFiles.js';

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

/** The command after "resume with: " on the last line that has one. */
function resumeCommandIn(stderr: string): string {
  const found = [...stderr.matchAll(/resume with: (.*)$/gm)].pop();
  expect(found, stderr).toBeDefined();
  return found![1];
}

/** Runs a printed command as a user pasting it into a shell would, in the same folder. */
function pasted(command: string, cwd = ROOT): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync('bash', ['-c', command], { cwd, encoding: 'utf8', timeout: 120_000 });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
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

/** One line on stderr naming `path`, exit 2, no stack trace (the typed-error rule of this project). */
function expectOneLine(r: { code: number | null; stderr: string }, ...names: (string | RegExp)[]): void {
  expect(r.stderr).not.toMatch(noStack);
  expect(r.stderr.trim().split('\n'), r.stderr).toHaveLength(1);
  for (const name of names)
    expect(r.stderr).toMatch(typeof name === 'string' ? new RegExp(name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')) : name);
  expect(r.code).toBe(2);
}

describe('options are checked before anything is printed', () => {
  // Found by fuzzing: each of these printed the whole table, then the error, then exited 2.
  it.each([
    [['--power', 'abc'], '--power'],
    [['--power', '0'], '--power'],
    [['--terms', '0'], '--terms'],
    [['--terms', '1.5'], '--terms'],
    [['--parameter', 'nope'], '--parameter nope'],
    [['--json', '--parameter', 'nope'], '--parameter nope'],
    [['--long', '--csv', '--power', '-1'], '--power'],
  ])('summary RUN %j: nothing on stdout, one line naming the option, exit 2', (args, name) => {
    const r = runCli(['summary', scanRun, ...args]);
    expect(r.stdout).toBe('');
    expectOneLine(r, name);
  });
});

describe('folders that cannot be written', () => {
  /** A fresh folder with the two specs and a plain file `afile`. */
  function workspace(): { dir: string; scan: string; evolve: string; file: string } {
    const dir = tmp();
    writeFileSync(path.join(dir, 'scan.toml'), SCAN);
    writeFileSync(path.join(dir, 'evolve.toml'), EVOLVE);
    writeFileSync(path.join(dir, 'afile'), 'not a folder\n');
    return {
      dir,
      scan: path.join(dir, 'scan.toml'),
      evolve: path.join(dir, 'evolve.toml'),
      file: path.join(dir, 'afile'),
    };
  }
  const commands = (w: ReturnType<typeof workspace>, out: string): [string, string[]][] => [
    ['scan', ['scan', w.scan, '--out', out, '--quiet', '--workers', '1']],
    ['evolve', ['evolve', w.evolve, '--out', out, '--quiet']],
    ['report', ['report', scanRun, '--out', out === '' ? '' : path.join(out, 'report.html')]],
    ['merge', ['merge', scanRun, '--out', out]],
  ];

  it('--out naming an existing file, or a path through one: the path and the cause, exit 2, the file untouched', () => {
    const w = workspace();
    for (const out of [w.file, path.join(w.file, 'sub')]) {
      for (const [name, args] of commands(w, out)) {
        const r = runCli(args);
        expect(r.stderr, `${name} --out ${out}`).toMatch(/afile is a file, not a folder/);
        expectOneLine(r, w.file);
      }
    }
    expect(readdirSync(w.dir).sort()).toEqual(['afile', 'evolve.toml', 'scan.toml']);
    expect(readFileSync(w.file, 'utf8')).toBe('not a folder\n');
  });

  it("--out '' is refused by name before anything is written", () => {
    const w = workspace();
    for (const [name, args] of commands(w, '')) {
      const r = runCli(args, { cwd: w.dir });
      expect(r.stderr, name).toMatch(/--out: expected a path, got an empty one/);
      expectOneLine(r);
    }
    expect(readdirSync(w.dir).sort()).toEqual(['afile', 'evolve.toml', 'scan.toml']);
  });

  it('report --out naming an existing folder: refused, and no temporary file left beside it', () => {
    const w = workspace();
    const r = runCli(['report', scanRun, '--out', w.dir]);
    expectOneLine(r, `cannot write ${w.dir}: it is a folder`);
    expect(readdirSync(path.dirname(w.dir)).filter((f) => f.startsWith(`${path.basename(w.dir)}.tmp`))).toEqual([]);
  });

  it('a lock that is a folder is named and left alone; nothing else is left in the run folder', () => {
    const w = workspace();
    const out = path.join(w.dir, 'run');
    mkdirSync(path.join(out, 'lock'), { recursive: true });
    const r = runCli(['scan', w.scan, '--out', out, '--quiet']);
    expectOneLine(r, `${path.join(out, 'lock')} is not a lock file`);
    expect(readdirSync(out)).toEqual(['lock']);
    expect(statSync(path.join(out, 'lock')).isDirectory()).toBe(true);
  });

  // Linux's /proc refuses new entries with ENOENT although the parent exists; Node's recursive
  // mkdir then retries forever. Found by fuzzing --out; spawnSync's timeout turns a hang into a failure.
  it.skipIf(!existsSync('/proc/self'))(
    '--out under /proc: one line, exit 2, no endless loop (scan, evolve, report)',
    () => {
      const w = workspace();
      for (const [name, args] of commands(w, '/proc/rungchain-nope').slice(0, 3)) {
        const r = runCli(args, { timeout: 30_000 });
        expect(r.code, `${name} hung or crashed: ${r.stderr}`).not.toBeNull();
        expectOneLine(r, '/proc/rungchain-nope', /\/proc does not take new folders/);
      }
    },
  );
});

describe('a full disk (simulated through the RUNGCHAIN_TEST_DISK_BYTES fault, tests/support/faults.mjs)', () => {
  const full = (args: string[], bytes: number, cwd = ROOT) => {
    const r = spawnSync(process.execPath, [...FAULTS, CLI, ...args], {
      cwd,
      encoding: 'utf8',
      timeout: 120_000,
      env: { ...process.env, RUNGCHAIN_TEST_DISK_BYTES: String(bytes) },
    });
    return { code: r.status, stdout: r.stdout, stderr: r.stderr };
  };

  it('ENOSPC on start (the lock, then the manifest): the path and the cause, exit 2, nothing left behind', () => {
    const dir = tmp();
    writeFileSync(path.join(dir, 'scan.toml'), SCAN);
    writeFileSync(path.join(dir, 'evolve.toml'), EVOLVE);
    // 0 bytes: the lock cannot be written; 300 bytes: the lock is, the manifest (about 1 KB) is not.
    for (const bytes of [0, 300]) {
      for (const args of [
        ['scan', 'scan.toml', '--out', 'new/run', '--quiet'],
        ['evolve', 'evolve.toml', '--out', 'new/run', '--quiet'],
      ]) {
        const r = full(args, bytes, dir);
        expectOneLine(r, 'new/run', /no space left on the device \(ENOSPC\)/);
        // The folders it created are removed again; no stray lock or temporary file.
        expect(readdirSync(dir).sort(), `${args[0]} at ${bytes} bytes`).toEqual(['evolve.toml', 'scan.toml']);
      }
    }
    // A folder that was there before stays, empty.
    mkdirSync(path.join(dir, 'mine'));
    expectOneLine(
      full(['scan', 'scan.toml', '--out', 'mine', '--quiet'], 0, dir),
      /cannot write the lock in mine: no space left/,
    );
    expect(readdirSync(path.join(dir, 'mine'))).toEqual([]);
  });

  it('evolve --out when the disk fills: the trace stays pending, and the same command continues it without writing a time twice', () => {
    const dir = tmp();
    // 6 sites x 3 levels (729 states): many Krylov steps, so checkpoints fall between recorded times.
    const spec = path.join(dir, 'quench.toml');
    writeFileSync(
      spec,
      `[chain]\nsites = 6\n[levels]\ncount = 3\ntunnelling = 0.5\n[exchange]\nstrength = 1.0\n` +
        `[evolve]\ninitial = [0, 0, 1, 0, 0, 0]\ntimes = { from = 0, to = 20, steps = 200 }\ntolerance = 1e-9\n`,
    );
    const reference = JSON.parse(runCli(['evolve', spec, '--json']).stdout);
    expect(reference.times).toHaveLength(201);

    const out = path.join(dir, 'run');
    const filled = full(['evolve', spec, '--out', out, '--quiet', '--checkpoint-every', '0'], 60_000);
    expectOneLine(filled, /no space left on the device \(ENOSPC\)/, `--checkpoint-every 0 --out ${out}`);
    const partial = loadEvolveRun(out).traces[0];
    // A write that failed is not a failed trace.
    expect(partial.status).toBe('pending');
    expect(partial.frames.length).toBeGreaterThan(0);
    expect(partial.frames.length).toBeLessThan(201);
    expect(existsSync(path.join(out, 'checkpoint-0.bin'))).toBe(true);

    // Space freed: the command it printed continues the trace; --retry-failed then finds nothing to redo.
    const resumed = pasted(resumeCommandIn(filled.stderr));
    expect(resumed.status, resumed.stderr).toBe(0);
    expect(resumed.stderr).toMatch(/resuming trace at t = /);
    expect(runCli(['evolve', spec, '--out', out, '--retry-failed', '--quiet']).code).toBe(0);
    const frames = readRun(out).records.filter((r) => r.kind === 'frame');
    expect(frames.map((f) => f.index)).toEqual(Array.from({ length: 201 }, (_, k) => k));
    const trace = loadEvolveRun(out).traces[0];
    expect(trace.status).toBe('done');
    // The resumed trace agrees with the uninterrupted one to the propagation tolerance (1e-9 in the state's norm).
    trace.frames.forEach((f, k) => {
      expect(f.time).toBe(reference.times[k]);
      expect(Math.abs((f.observables.energy as number) - reference.observables.energy[k])).toBeLessThan(1e-8);
      (f.observables.populations as number[][]).forEach((row, i) =>
        row.forEach((p, n) => expect(Math.abs(p - reference.observables.populations[k][i][n])).toBeLessThan(1e-8)),
      );
    });
  });
});

describe('partial failure: exit 3 and one closing line, for scan, evolve and merge alike', () => {
  // chain.sites = 13 with 3 levels needs 3^13 states, far above a 70 MB limit: that point fails with its reason.
  const AXIS = `\n[[scan.axis]]\nkey = "chain.sites"\nvalues = [3, 13, 4]\n`;
  const BASE = `[chain]\nsites = 3\n[levels]\ncount = 3\ntunnelling = 0.5\n[exchange]\nstrength = 1.0\n`;
  const TIMES = `[evolve]\ntimes = { from = 0, to = 2, steps = 4 }\n`;

  it('scan, then merge of its folder: 1 of 3 points failed, exit 3 (was 0)', () => {
    const dir = tmp();
    writeFileSync(path.join(dir, 'scan.toml'), BASE + AXIS);
    const out = path.join(dir, 'run');
    const r = runCli(['scan', path.join(dir, 'scan.toml'), '--out', out, '--max-memory', '70MB', '--quiet']);
    expect(r.code).toBe(3);
    expect(r.stderr.trim().split('\n')).toEqual([
      expect.stringMatching(
        /^rungchain: 1 of 3 points failed \(the reasons: .*summary .*\); rerun them with --retry-failed$/,
      ),
    ]);
    const merged = runCli(['merge', out, '--out', path.join(dir, 'merged')]);
    expect(merged.stdout).toMatch(/2 done, 1 failed, 0 missing of 3/);
    expect(merged.code).toBe(3);
  });

  it('evolve over a scan: 1 of 3 traces failed, exit 3 (was 2 with no word on why)', () => {
    const dir = tmp();
    writeFileSync(path.join(dir, 'evolve.toml'), BASE + TIMES + AXIS);
    const out = path.join(dir, 'run');
    for (let attempt = 0; attempt < 2; attempt++) {
      const r = runCli([
        'evolve',
        path.join(dir, 'evolve.toml'),
        '--out',
        out,
        '--max-memory',
        '70MB',
        '--quiet',
        '--json',
      ]);
      expect(JSON.parse(r.stdout)).toHaveLength(3);
      expect(r.stderr.trim().split('\n')).toEqual([
        expect.stringMatching(
          /^rungchain: 1 of 3 traces failed \(the reasons: .*trace .*\); rerun them with --retry-failed$/,
        ),
      ]);
      expect(r.code).toBe(3);
    }
  });

  it('a single trace that failed: the next run says why and exits 3 instead of exiting 2 in silence', () => {
    const dir = tmp();
    writeFileSync(path.join(dir, 'big.toml'), BASE.replace('sites = 3', 'sites = 13') + TIMES);
    const args = [
      'evolve',
      path.join(dir, 'big.toml'),
      '--out',
      path.join(dir, 'run'),
      '--max-memory',
      '70MB',
      '--quiet',
    ];
    // The run that meets the error reports it as any error (exit 2) and records the trace as failed.
    expectOneLine(runCli(args), /needs an estimated .* more than the memory limit/);
    const again = runCli(args);
    expect(again.stderr.trim().split('\n')).toEqual([
      expect.stringMatching(
        /^rungchain: the trace failed: ResourceError: .*memory limit.*; run it again with --retry-failed$/,
      ),
    ]);
    expect(again.code).toBe(3);
  });
});

describe('the commands rungchain prints can be pasted where the user stands', () => {
  // After the README's install (`npm install` in a clone) the name `rungchain` is not on PATH.
  it('Ctrl-C during a scan prints a resume command with the options the run used, and pasting it finishes the run', async () => {
    const dir = tmp();
    writeFileSync(path.join(dir, 'scan.toml'), SCAN);
    const out = path.join(dir, 'my run');
    const child = spawn(
      process.execPath,
      [
        ...FAULTS,
        CLI,
        'scan',
        path.join(dir, 'scan.toml'),
        '--out',
        out,
        '--workers',
        '1',
        '--no-warm-start',
        '--max-memory',
        '8GB',
      ],
      {
        cwd: ROOT,
        stdio: ['ignore', 'ignore', 'pipe'],
        env: { ...process.env, RUNGCHAIN_TEST_POINT_DELAY_MS: '100' },
      },
    );
    let stderr = '';
    child.stderr.on('data', (d) => (stderr += d));
    const exit = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
    const records = path.join(out, 'records.msgpack');
    for (let i = 0; i < 2000 && !(existsSync(records) && statSync(records).size > 0); i++)
      await new Promise((r) => setTimeout(r, 10));
    child.kill('SIGINT');
    expect(await exit).toBe(130);
    const command = resumeCommandIn(stderr);
    for (const option of ['--no-warm-start', '--max-memory 8GB', '--workers 1', `--out '${out}'`])
      expect(command).toContain(option);
    const resumed = pasted(command);
    expect(resumed.stderr).not.toMatch(/command not found/);
    expect(resumed.status, resumed.stderr).toBe(0);
    expect(resumed.stderr).toMatch(/resuming .*: \d+ done, 0 failed/);
    expect(readRun(out).records).toHaveLength(480);
    // The closing hint works too.
    const hint = /results: (.*?) {2}\(--csv/.exec(resumed.stderr)![1];
    expect(JSON.parse(pasted(`${hint} --json`).stdout)).toHaveLength(480);
  });
});
