import { describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, statSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { EigenvalueDecomposition } from 'ml-matrix';
import { SpecError } from '../../src/errors/errors.js';
import { readRun, RECORDS_FILE } from '../../src/runs/runFiles.js';
import { expandScan, linesOf, paramsOf } from '../../src/scan/plan.js';
import { parseSpecText, rotorWeights, validateSpec } from '../../src/spec/spec.js';
import { CLI, FAULTS, runCli } from '../support/cli.js';
import { densePinnedHamiltonian } from '../support/reference.js';

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-scan-'));

function expand(toml: string) {
  const raw = parseSpecText(toml, 'toml');
  return expandScan(raw, validateSpec(raw));
}

function writeSpec(dir: string, toml: string): string {
  const file = path.join(dir, 'spec.toml');
  writeFileSync(file, toml);
  return file;
}

type Rec = Record<string, any>;

/** The latest record of every point, by index; fails on a point recorded twice as done. */
function recordsByIndex(dir: string): Map<number, Rec> {
  const map = new Map<number, Rec>();
  for (const r of readRun(dir).records as Rec[]) {
    if (map.get(r.index)?.status === 'done') throw new Error(`point ${r.index} recorded twice as done`);
    map.set(r.index, r);
  }
  return map;
}

const BASE = `
[chain]
sites = 7
[levels]
count = 3
[exchange]
strength = 1.0
weights = "rotor"
[solve]
states = 2
tolerance = 1e-10
`;

describe('expanding [scan] axes', () => {
  it('a grid is row-major with the last axis fastest; lines run along it', () => {
    // Row-major order (last index fastest) is common practice (C arrays, NumPy's default).
    const plan = expand(`${BASE}
[[scan.axis]]
key = "levels.count"
values = [2, 3]
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1, 2]
`);
    expect(plan.points.map((p) => p.params)).toEqual([
      { 'levels.count': 2, 'exchange.strength': 0.5 },
      { 'levels.count': 2, 'exchange.strength': 1 },
      { 'levels.count': 2, 'exchange.strength': 2 },
      { 'levels.count': 3, 'exchange.strength': 0.5 },
      { 'levels.count': 3, 'exchange.strength': 1 },
      { 'levels.count': 3, 'exchange.strength': 2 },
    ]);
    expect(plan.lines).toEqual([
      [0, 1, 2],
      [3, 4, 5],
    ]);
    // Each point is a validated spec with the axis keys set.
    expect(plan.points[4].spec.levels.count).toBe(3);
    expect(plan.points[4].spec.exchange.strength).toBe(1);
    expect(plan.points[4].spec.exchange.weights).toEqual(rotorWeights(3));
    expect(plan.points[4].raw).not.toHaveProperty('scan');
  });

  it('zip pairs the axes value by value, as one line', () => {
    const plan = expand(`${BASE}
[scan]
zip = true
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1, 2]
[[scan.axis]]
key = "levels.tunnelling"
values = [2, 1, 0.5]
`);
    expect(plan.points.map((p) => [p.spec.exchange.strength, p.spec.levels.tunnelling[0]])).toEqual([
      [0.5, 2],
      [1, 1],
      [2, 0.5],
    ]);
    expect(plan.lines).toEqual([[0, 1, 2]]);
  });

  it('zipped axes of different lengths are refused, naming the axis', () => {
    expect(() =>
      expand(`${BASE}
[scan]
zip = true
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1, 2]
[[scan.axis]]
key = "levels.tunnelling"
values = [2, 1]
`),
    ).toThrow(/scan\.axis\[1\]: with zip = true every axis needs the same number of values/);
  });

  it('linear steps include both ends and are evenly spaced', () => {
    const plan = expand(`${BASE}
[[scan.axis]]
key = "exchange.strength"
from = 0.1
to = 0.5
steps = 5
`);
    // Evenly spaced values from a to b, ends included: a + (b - a) k / (n - 1) (textbook).
    expect(plan.points.map((p) => p.params['exchange.strength'])).toEqual([0.1, 0.2, 0.3, 0.4, 0.5]);
  });

  it('log spacing gives a geometric sequence from `from` to `to`', () => {
    const plan = expand(`${BASE}
[[scan.axis]]
key = "exchange.strength"
from = 0.01
to = 100
steps = 5
spacing = "log"
`);
    // Geometric sequence with ratio (to/from)^(1/(steps-1)) = 10 (textbook).
    const values = plan.points.map((p) => p.params['exchange.strength'] as number);
    [0.01, 0.1, 1, 10, 100].forEach((v, k) => expect(values[k]).toBeCloseTo(v, 12));
    expect(values[0]).toBe(0.01);
    expect(values[4]).toBe(100);
    expect(() =>
      expand(`${BASE}\n[[scan.axis]]\nkey = "exchange.strength"\nfrom = 0\nto = 1\nsteps = 3\nspacing = "log"\n`),
    ).toThrow(/scan\.axis\[0\]\.from: log spacing needs from and to greater than 0/);
  });

  it('string-valued axes set string keys (rigid-rotor vs uniform exchange weights)', () => {
    const plan = expand(`${BASE}
[[scan.axis]]
key = "exchange.weights"
values = ["uniform", "rotor"]
`);
    expect(plan.points.map((p) => p.params['exchange.weights'])).toEqual(['uniform', 'rotor']);
    expect(plan.points[0].spec.exchange.weights).toEqual([1, 1]);
    // docs/model.md: c_n = ((n+1)^2 / ((2n+1)(2n+3))) / (1/3), the squared M=0 rotor dipole matrix element.
    expect(plan.points[1].spec.exchange.weights[1]).toBeCloseTo(((2 * 2) / (3 * 5)) * 3, 14);
    // A string that looks like a number stays a string, and is then rejected by the spec.
    expect(() => expand(`${BASE}\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = ["2"]\n`)).toThrow(
      /exchange\.strength: expected a finite number, got "2"/,
    );
  });

  it('list indices in key paths set one element', () => {
    const plan = expand(`${BASE.replace('count = 3', 'count = 3\ntunnelling = [1, 1]')}
[[scan.axis]]
key = "levels.tunnelling[1]"
values = [0.25, 0.5]
`);
    expect(plan.points.map((p) => p.spec.levels.tunnelling)).toEqual([
      [1, 0.25],
      [1, 0.5],
    ]);
  });

  it('an invalid combination is reported before anything runs, with key path and point', () => {
    const attempt = () =>
      expand(`${BASE}
[[scan.axis]]
key = "levels.count"
values = [4, 2]
[[scan.axis]]
key = "levels.boundary"
values = ["open", "ring"]
`);
    expect(attempt).toThrow(SpecError);
    expect(attempt).toThrow(
      /^levels\.boundary: a ring needs at least 3 levels.*\(in scan point 3: levels\.count=2 levels\.boundary=ring\)/,
    );
  });

  it('unknown keys in axes and in the section are errors naming the key path', () => {
    expect(() => expand(`${BASE}\n[[scan.axis]]\nkey = "exchange.strenght"\nvalues = [1]\n`)).toThrow(
      /exchange\.strenght: unknown key \(did you mean strength\?\)/,
    );
    expect(() => expand(`${BASE}\n[[scan.axis]]\nkey = "exchange.strength"\nvalue = [1]\n`)).toThrow(
      /scan\.axis\[0\]\.value: unknown key/,
    );
    expect(() =>
      expand(`${BASE}\n[scan]\nzipp = true\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [1]\n`),
    ).toThrow(/scan\.zipp: unknown key/);
    expect(() =>
      expand(
        `${BASE}\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [1]\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [2]\n`,
      ),
    ).toThrow(/scan\.axis\[1\]\.key: "exchange\.strength" is already scanned/);
  });

  it('paramsOf and linesOf agree with the expansion for any index', () => {
    const plan = expand(`${BASE}
[[scan.axis]]
key = "levels.count"
values = [2, 3]
[[scan.axis]]
key = "levels.tunnelling"
values = [0.5, 1, 1.5]
[[scan.axis]]
key = "exchange.strength"
values = [1, 2]
`);
    plan.points.forEach((p) => expect(paramsOf(plan.section, p.index)).toEqual(p.params));
    expect(linesOf(plan.section)).toHaveLength(6);
  });
});

// ---------------------------------------------------------------------------------------------
// The command line (runs dist/, built by `npm test`)

const SCAN_SPEC = `${BASE}
[[scan.axis]]
key = "levels.tunnelling"
values = [0.6, 1.0]
[[scan.axis]]
key = "exchange.strength"
from = 0.5
to = 3
steps = 6
`;
const SCAN_POINTS = 12;
/** Scans that a test interrupts part way take at least 12 x 150 ms, however fast the solver gets. */
const SLOW_POINTS = { ...process.env, RUNGCHAIN_TEST_POINT_DELAY_MS: '150' };

/** Starts a scan, SIGKILLs it once `atLeast` records are on disk, and returns when it is dead. */
function scanAndKill(args: string[], recordsFile: string, atLeast: number): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [...FAULTS, CLI, ...args], { stdio: 'ignore', env: SLOW_POINTS });
    let killed = false;
    const poll = setInterval(() => {
      if (!existsSync(recordsFile) || killed) return;
      const count = readRun(path.dirname(recordsFile)).records.length;
      if (count >= atLeast) {
        killed = true;
        child.kill('SIGKILL');
      }
    }, 20);
    child.on('exit', (code, signal) => {
      clearInterval(poll);
      if (signal === 'SIGKILL') resolve();
      else reject(new Error(`scan ended by itself (code ${code}) before it could be killed`));
    });
  });
}

function expectSameResult(a: Rec, b: Rec, exact: boolean): void {
  expect(a.params).toEqual(b.params);
  expect(a.status).toBe('done');
  expect(b.status).toBe('done');
  if (exact) {
    expect(a.result.energies).toEqual(b.result.energies);
    expect(a.result.observables).toEqual(b.result.observables);
    return;
  }
  // Warm starts change the start vector, so agreement is to the solver tolerance (1e-10 residual).
  a.result.energies.forEach((e: number, k: number) => expect(e).toBeCloseTo(b.result.energies[k], 9));
  expect(a.result.observables.string_width).toBeCloseTo(b.result.observables.string_width, 6);
  a.result.observables.populations
    .flat()
    .forEach((p: number, k: number) => expect(p).toBeCloseTo(b.result.observables.populations.flat()[k], 6));
}

/** One uninterrupted cold-start run of SCAN_SPEC, shared by the tests that compare against it. */
let wholeRun: { spec: string; dir: string } | null = null;
function uninterruptedRun(): { spec: string; dir: string } {
  if (!wholeRun) {
    const dir = tmp();
    const spec = writeSpec(dir, SCAN_SPEC);
    const out = path.join(dir, 'whole');
    expect(runCli(['scan', spec, '--out', out, '--workers', '2', '--quiet', '--no-warm-start']).code).toBe(0);
    wholeRun = { spec, dir: out };
  }
  return wholeRun;
}

describe('rungchain scan', () => {
  it('check prints the number of points and the largest dimension and memory estimate', () => {
    const dir = tmp();
    const spec = writeSpec(
      dir,
      SCAN_SPEC.replace(
        'values = [0.6, 1.0]',
        'values = [0.6, 1.0]\n[[scan.axis]]\nkey = "levels.count"\nvalues = [2, 4]',
      ),
    );
    const r = runCli(['check', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/scan\s+24 points, grid/);
    // 4 levels on 7 sites: 4^7 states.
    expect(r.stdout).toMatch(
      new RegExp(`largest point\\s+#\\d+ \\(.*levels\\.count=4.*\\): basis dimension ${4 ** 7}`),
    );
    expect(r.stdout).toMatch(/memory estimate\s+[\d.]+ MiB for the largest point/);
  });

  it('SIGKILL part way, then resume: every record equals an uninterrupted run, none missing or doubled (cold starts: bit for bit)', async () => {
    const { spec, dir: whole } = uninterruptedRun();
    const killed = path.join(tmp(), 'killed');
    const common = ['--workers', '2', '--quiet', '--no-warm-start'];
    await scanAndKill(['scan', spec, '--out', killed, ...common], path.join(killed, RECORDS_FILE), 4);
    const partial = readRun(killed).records.length;
    expect(partial).toBeGreaterThanOrEqual(4);
    expect(partial).toBeLessThan(SCAN_POINTS);
    const resumed = runCli(['scan', spec, '--out', killed, '--workers', '2', '--no-warm-start']);
    expect(resumed.code).toBe(0);
    expect(resumed.stderr).toMatch(/resuming .*: \d+ done, 0 failed, \d+ to run/);
    const a = recordsByIndex(whole);
    const b = recordsByIndex(killed);
    expect([...b.keys()].sort((x, y) => x - y)).toEqual(Array.from({ length: SCAN_POINTS }, (_, k) => k));
    // Records are appended once each: the file holds exactly one per point.
    expect(readRun(killed).records).toHaveLength(SCAN_POINTS);
    for (let k = 0; k < SCAN_POINTS; k++) expectSameResult(b.get(k)!, a.get(k)!, true);
  });

  it('SIGKILL and resume with warm starts agrees to the solver tolerance', async () => {
    const { spec, dir: whole } = uninterruptedRun();
    const killed = path.join(tmp(), 'killed');
    await scanAndKill(['scan', spec, '--out', killed, '--workers', '1', '--quiet'], path.join(killed, RECORDS_FILE), 5);
    expect(runCli(['scan', spec, '--out', killed, '--workers', '2', '--quiet']).code).toBe(0);
    const a = recordsByIndex(whole);
    const b = recordsByIndex(killed);
    expect(b.size).toBe(SCAN_POINTS);
    expect(readRun(killed).records).toHaveLength(SCAN_POINTS);
    for (let k = 0; k < SCAN_POINTS; k++) expectSameResult(b.get(k)!, a.get(k)!, false);
    // Warm starts happened and are recorded, with the iterations of every point.
    const all = [...b.values()];
    expect(all.some((r) => r.warm_start)).toBe(true);
    for (const r of all) expect(r.iterations).toBe(r.result.solver.iterations);
  });

  it('energies along an exchange line match the free-fermion result of the XX chain', () => {
    const dir = tmp();
    // Two levels and no tunnelling: the XX chain, exactly solvable by free fermions
    // (Lieb, Schultz, Mattis, Ann. Phys. 16, 407 (1961)): E0 = sum_k min(0, 2V cos(k pi/(L+1))).
    const L = 10;
    const spec = writeSpec(
      dir,
      `[chain]\nsites = ${L}\n[levels]\ncount = 2\ntunnelling = 0\n[exchange]\nstrength = 1\n[solve]\nstates = 1\nsymmetries = "none"\n` +
        `[[scan.axis]]\nkey = "exchange.strength"\nfrom = 0.5\nto = 2\nsteps = 4\n`,
    );
    const out = path.join(dir, 'run');
    expect(runCli(['scan', spec, '--out', out, '--workers', '1', '--quiet']).code).toBe(0);
    const records = recordsByIndex(out);
    for (const r of records.values()) {
      const V = r.params['exchange.strength'];
      let e0 = 0;
      for (let k = 1; k <= L; k++) e0 += Math.min(0, 2 * V * Math.cos((k * Math.PI) / (L + 1)));
      expect(r.result.energies[0]).toBeCloseTo(e0, 9);
      // Scaling H by V leaves its eigenvectors unchanged (textbook), so consecutive ground states coincide.
      if (r.index > 0 && r.overlap_previous !== null) expect(r.overlap_previous).toBeCloseTo(1, 8);
    }
    expect([...records.values()].filter((r) => r.overlap_previous !== null).length).toBeGreaterThan(0);
  });

  it('overlap_previous is |<psi_prev|psi>| of the dense reference ground states', () => {
    const dir = tmp();
    const toml =
      `[chain]\nsites = 4\n[levels]\ncount = 4\ntunnelling = 1\ndetuning = [0, 0.3, -0.2, 0.5]\n[exchange]\nstrength = 1\nweights = "rotor"\n` +
      `[solve]\nstates = 1\nsymmetries = "none"\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [0.5, 1.5, 3]\n`;
    const spec = writeSpec(dir, toml);
    const out = path.join(dir, 'run');
    expect(runCli(['scan', spec, '--out', out, '--workers', '1', '--quiet']).code).toBe(0);
    const records = recordsByIndex(out);
    // Independent: ground states of the plain dense Hamiltonian (tests/support/reference.ts) from
    // ml-matrix's symmetric eigensolver.
    const grounds = [0.5, 1.5, 3].map((V) => {
      const raw = parseSpecText(toml, 'toml');
      delete raw.scan;
      (raw.exchange as Rec).strength = V;
      const h = densePinnedHamiltonian(validateSpec(raw));
      const e = new EigenvalueDecomposition(h.re, { assumeSymmetric: true });
      const order = e.realEigenvalues.map((v, k) => [v, k]).sort((x, y) => x[0] - y[0]);
      return e.eigenvectorMatrix.getColumn(order[0][1]);
    });
    const overlap = (a: number[], b: number[]) => Math.abs(a.reduce((s, x, k) => s + x * b[k], 0));
    expect(records.get(1)!.overlap_previous).toBeCloseTo(overlap(grounds[0], grounds[1]), 8);
    expect(records.get(2)!.overlap_previous).toBeCloseTo(overlap(grounds[1], grounds[2]), 8);
    expect(records.get(0)!.overlap_previous).toBeNull();
    // The check has teeth: the ground state does change along this line.
    expect(overlap(grounds[0], grounds[2])).toBeLessThan(0.999);
  });

  it('a point that throws and a point that kills its worker are recorded as failed; the scan goes on; --retry-failed reruns them', () => {
    const dir = tmp();
    // chain.sites = 12 needs 3^12 states, far above a 70 MB limit; point 5's worker exits abruptly.
    const spec = writeSpec(dir, `${BASE}\n[[scan.axis]]\nkey = "chain.sites"\nvalues = [3, 4, 12, 5, 4, 5, 3]\n`);
    const out = path.join(dir, 'run');
    const r = spawnCli(['scan', spec, '--out', out, '--workers', '2', '--max-memory', '70MB'], {
      RUNGCHAIN_TEST_WORKER_EXIT_AT: '5',
    });
    // A run left with failed points exits 3 and says so on its last line (the README's rule).
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/scan finished: 5 done, 2 failed of 7/);
    expect(r.stderr.trim().split('\n').pop()).toMatch(
      /^rungchain: 2 of 7 points failed \(the reasons: .* summary .*\); rerun them with --retry-failed$/,
    );
    const records = recordsByIndex(out);
    expect(records.size).toBe(7);
    expect(records.get(2)!.status).toBe('failed');
    expect(records.get(2)!.error).toMatch(/ResourceError: .*needs an estimated .* more than the memory limit/);
    expect(records.get(5)!.status).toBe('failed');
    expect(records.get(5)!.error).toMatch(/worker stopped while solving this point \(.*code.*70/);
    for (const k of [0, 1, 3, 4, 6]) expect(records.get(k)!.status).toBe('done');

    // Without --retry-failed nothing runs; with it, the failed points run again (now without the fault).
    const idle = runCli(['scan', spec, '--out', out, '--max-memory', '70MB']);
    expect(idle.stderr).toMatch(/nothing to do .*5 done, 2 failed of 7.*--retry-failed/);
    expect(idle.code).toBe(3);
    const retry = runCli(['scan', spec, '--out', out, '--retry-failed', '--workers', '1', '--max-memory', '70MB']);
    // Point 2 still exceeds the memory limit.
    expect(retry.code).toBe(3);
    expect(retry.stderr).toMatch(/1 of 7 points failed/);
    const after = recordsByIndex(out);
    expect(after.get(5)!.status).toBe('done');
    expect(after.get(2)!.status).toBe('failed');
    expect(readRun(out).records).toHaveLength(9);
  });

  // A point whose worker outgrows its memory ceiling must fail alone (common practice for batch
  // runners: one job over its memory is stopped, not the node). Each point here needs far less
  // than the 100 MB limit; the test hook makes point 2 take 400 MiB on top.
  for (const [kind, reason] of [
    ['heap', /JS heap went over the worker's ceiling of 95 MiB \(ERR_WORKER_OUT_OF_MEMORY\)/],
    [
      'buffer',
      /resident memory .* went over its ceiling .*--max-memory 95\.4 MiB and a JS heap of 95 MiB for each of 1 worker.*worker was stopped/,
    ],
  ] as const) {
    it(`a point whose worker goes over its memory ceiling (${kind}) is recorded as failed and the scan goes on`, () => {
      const dir = tmp();
      const spec = writeSpec(dir, `${BASE}\n[[scan.axis]]\nkey = "chain.sites"\nvalues = [3, 4, 5, 4, 3]\n`);
      const out = path.join(dir, 'run');
      const r = spawnCli(['scan', spec, '--out', out, '--workers', '1', '--max-memory', '100MB'], {
        RUNGCHAIN_TEST_POINT_ALLOCATE: `${kind}:400@2`,
      });
      expect(r.code).toBe(3); // the partial-failure rule: a run left with failed points exits 3
      expect(r.stderr).toMatch(/scan finished: 4 done, 1 failed of 5/);
      const records = recordsByIndex(out);
      expect(records.get(2)!.status).toBe('failed');
      expect(records.get(2)!.error).toMatch(reason);
      for (const k of [0, 1, 3, 4]) expect(records.get(k)!.status).toBe('done');
    });
  }

  it('a second scan into the same folder at the same time is refused', async () => {
    const dir = tmp();
    const spec = writeSpec(dir, SCAN_SPEC);
    const out = path.join(dir, 'run');
    const first = spawn(process.execPath, [...FAULTS, CLI, 'scan', spec, '--out', out, '--workers', '1', '--quiet'], {
      stdio: 'ignore',
      env: SLOW_POINTS,
    });
    const firstExit = new Promise<number | null>((resolve) => first.on('exit', (code) => resolve(code)));
    // Wait until the first scan holds the lock.
    for (let i = 0; i < 500 && !existsSync(path.join(out, 'lock')); i++) await new Promise((r) => setTimeout(r, 10));
    expect(existsSync(path.join(out, 'lock'))).toBe(true);
    const second = runCli(['scan', spec, '--out', out, '--workers', '1']);
    expect(second.code).toBe(2);
    expect(second.stderr).toMatch(new RegExp(`in use by another writer \\(pid ${first.pid} `));
    expect(second.stderr.trim().split('\n')).toHaveLength(1);
    expect(await firstExit).toBe(0);
    expect(recordsByIndex(out).size).toBe(SCAN_POINTS);
  });

  it('Ctrl-C keeps every finished record, prints how to resume, and the resume completes', async () => {
    const dir = tmp();
    const spec = writeSpec(dir, SCAN_SPEC);
    const out = path.join(dir, 'run');
    const child = spawn(process.execPath, [...FAULTS, CLI, 'scan', spec, '--out', out, '--workers', '1'], {
      stdio: ['ignore', 'ignore', 'pipe'],
      env: SLOW_POINTS,
    });
    let stderr = '';
    child.stderr.on('data', (d) => (stderr += d));
    const exit = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
    const file = path.join(out, RECORDS_FILE);
    for (
      let i = 0;
      i < 1000 && !(existsSync(file) && statSync(file).size > 0 && readRun(out).records.length >= 2);
      i++
    ) {
      await new Promise((r) => setTimeout(r, 10));
    }
    child.kill('SIGINT');
    expect(await exit).toBe(130);
    expect(stderr).toMatch(/interrupted: \d+ done, 0 failed, \d+ pending of 12/);
    // Printed so that it runs from here (README install: `rungchain` is not on PATH); tests/e2e/cliRobustness.test.ts runs it.
    expect(stderr).toMatch(/resume with: \S*(rungchain|node \S*rungchain\.js) scan .*spec\.toml .*--out /);
    const saved = readRun(out);
    expect(saved.tornBytes).toBe(0);
    expect(saved.records.length).toBeGreaterThanOrEqual(2);
    expect(existsSync(path.join(out, 'lock'))).toBe(false);
    expect(runCli(['scan', spec, '--out', out, '--quiet']).code).toBe(0);
    expect(recordsByIndex(out).size).toBe(SCAN_POINTS);
  });
});

describe('uneven work along a line', () => {
  it('a worker that runs out of work takes the unstarted half of the busier one: every point once, same results as one worker', () => {
    const dir = tmp();
    const spec = writeSpec(
      dir,
      `${BASE}
[[scan.axis]]
key = "exchange.strength"
from = 0.5
to = 3
steps = 10
`,
    );
    const one = path.join(dir, 'one');
    const two = path.join(dir, 'two');
    expect(runCli(['scan', spec, '--out', one, '--workers', '1', '--quiet']).code).toBe(0);
    // Points 0-4 (the first worker's half) take at least 1 s each; the other half is fast. The
    // margin is for a loaded machine: at 400 ms this failed at least once in about a dozen runs
    // of the whole suite (the slow half was not shared), with other test files solving beside it.
    const r = spawnCli(['scan', spec, '--out', two, '--workers', '2', '--quiet'], {
      RUNGCHAIN_TEST_POINT_DELAY_MS: '1000@0-4',
    });
    expect(r.code).toBe(0);
    const alone = recordsByIndex(one);
    const shared = recordsByIndex(two); // fails on a point recorded twice
    expect(readRun(two).records).toHaveLength(10);
    expect([...shared.keys()].sort((a, b) => a - b)).toEqual([...Array(10).keys()]);
    // The slow half was shared: its points were solved by both workers.
    expect(new Set([0, 1, 2, 3, 4].map((i) => shared.get(i)!.worker)).size).toBe(2);
    for (const [index, rec] of shared) {
      expectSameResult(rec, alone.get(index)!, false);
      // A taken piece starts with a lead-in solve, so its first point has its overlap too.
      if (index > 0) expect(rec.overlap_previous).toBeCloseTo(alone.get(index)!.overlap_previous, 6);
    }
  });
});

/** runCli with test faults named by extra environment variables (tests/support/faults.mjs). */
function spawnCli(args: string[], env: Record<string, string>) {
  const r = spawnSync(process.execPath, [...FAULTS, CLI, ...args], {
    encoding: 'utf8',
    env: { ...process.env, ...env },
    timeout: 120_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
