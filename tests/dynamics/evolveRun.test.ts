import { describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { CLI, ROOT, runCli } from '../support/cli.js';
import { loadEvolveRun } from '../../src/dynamics/evolveRun.js';

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-evolve-'));

/** Long enough to interrupt: 7 sites x 3 levels (2187 states), 81 recorded times. */
const LONG_SPEC = `
[chain]
sites = 7
boundary = "periodic"
[levels]
count = 3
tunnelling = 1.0
[exchange]
strength = 1.2
weights = "rotor"
[evolve]
initial = { levels = [0, 0, 0, 0, 0, 0, 0], pulses = [{ between = [0, 1], area = 1.5, sites = [3] }] }
times = { from = 0, to = 40, steps = 80 }
tolerance = 1e-9
`;

function sleep(ms: number): Promise<void> {
  return new Promise((r) => setTimeout(r, ms));
}

/** Starts `evolve`, waits until at least `minBytes` of records are on disk, then sends `signal`; resolves with the exit code. */
async function interrupt(
  spec: string,
  dir: string,
  minBytes: number,
  signal: NodeJS.Signals,
): Promise<{ code: number | null; signal: string | null; stderr: string }> {
  const child = spawn(process.execPath, [CLI, 'evolve', spec, '--out', dir, '--checkpoint-every', '0'], { cwd: ROOT });
  let stderr = '';
  child.stderr.on('data', (d) => (stderr += d));
  const records = path.join(dir, 'records.msgpack');
  let running = true;
  const exited = new Promise<{ code: number | null; signal: string | null }>((resolve) =>
    child.on('exit', (code, sig) => {
      running = false;
      resolve({ code, signal: sig });
    }),
  );
  for (let waited = 0; running && waited < 100_000; waited += 20) {
    if (existsSync(records) && statSync(records).size >= minBytes) break;
    await sleep(20);
  }
  child.kill(signal);
  const result = await exited;
  return { ...result, stderr };
}

function compareTraces(a: ReturnType<typeof loadEvolveRun>, b: ReturnType<typeof loadEvolveRun>): void {
  expect(b.traces).toHaveLength(a.traces.length);
  a.traces.forEach((ta, p) => {
    const tb = b.traces[p];
    expect(tb.status).toBe('done');
    expect(tb.frames.map((f) => f.index)).toEqual(ta.frames.map((f) => f.index));
    ta.frames.forEach((fa, k) => {
      const fb = tb.frames[k];
      expect(fb.time).toBe(fa.time);
      // A resumed trace takes different steps after the checkpoint; both stay within the tolerance (1e-9) of the exact state.
      expect(Math.abs((fb.observables.energy as number) - (fa.observables.energy as number))).toBeLessThan(1e-8);
      expect(
        Math.abs((fb.observables.return_probability as number) - (fa.observables.return_probability as number)),
      ).toBeLessThan(1e-8);
      (fa.observables.populations as number[][]).forEach((row, i) =>
        row.forEach((q, n) =>
          expect(Math.abs((fb.observables.populations as number[][])[i][n] - q)).toBeLessThan(1e-8),
        ),
      );
    });
  });
}

describe('evolve into a run folder', () => {
  it('killed with SIGKILL part way, resumed: the same trace as an uninterrupted run, no time missing or doubled', async () => {
    const dir = tmp();
    const spec = path.join(dir, 'long.toml');
    writeFileSync(spec, LONG_SPEC);
    const whole = runCli(['evolve', spec, '--out', path.join(dir, 'whole'), '--quiet'], { timeout: 120_000 });
    expect(whole.code).toBe(0);
    const reference = loadEvolveRun(path.join(dir, 'whole'));
    expect(reference.traces[0].frames).toHaveLength(81);

    const cut = path.join(dir, 'cut');
    const killed = await interrupt(spec, cut, 12_000, 'SIGKILL');
    expect(killed.signal, `exit ${killed.code}: ${killed.stderr}`).toBe('SIGKILL');
    const partial = loadEvolveRun(cut);
    expect(partial.traces[0].status).toBe('pending');
    expect(partial.traces[0].frames.length).toBeGreaterThan(0);
    expect(partial.traces[0].frames.length).toBeLessThan(81);
    expect(existsSync(path.join(cut, 'checkpoint-0.bin'))).toBe(true);

    const resumed = runCli(['evolve', spec, '--out', cut], { timeout: 120_000 });
    expect(resumed.code).toBe(0);
    expect(resumed.stderr).toMatch(/resuming trace at t = /);
    compareTraces(reference, loadEvolveRun(cut));
    // The finished trace leaves no checkpoint (nor a temporary copy) behind, and a third run has nothing to do.
    expect(readdirSync(cut).filter((f) => f.startsWith('checkpoint-'))).toEqual([]);
    const again = runCli(['evolve', spec, '--out', cut, '--json'], { timeout: 60_000 });
    expect(again.code).toBe(0);
    expect(JSON.parse(again.stdout).times).toHaveLength(81);
  });

  it('Ctrl-C saves the state, says how to resume, exits 130; the resumed trace is complete', async () => {
    const dir = tmp();
    const spec = path.join(dir, 'long.toml');
    writeFileSync(spec, LONG_SPEC);
    const out = path.join(dir, 'run');
    const stopped = await interrupt(spec, out, 8_000, 'SIGINT');
    expect(stopped.code, stopped.stderr).toBe(130);
    expect(stopped.stderr).toMatch(/resume with: \S*(rungchain|node \S*rungchain\.js) evolve .* --out /);
    expect(existsSync(path.join(out, 'checkpoint-0.bin'))).toBe(true);
    const resumed = runCli(['evolve', spec, '--out', out], { timeout: 120_000 });
    expect(resumed.code).toBe(0);
    const trace = loadEvolveRun(out).traces[0];
    expect(trace.status).toBe('done');
    expect(trace.frames.map((f) => f.index)).toEqual(Array.from({ length: 81 }, (_, k) => k));
  });
});

describe('evolve on the command line', () => {
  const RABI = `
[chain]
sites = 2
[levels]
count = 2
tunnelling = 0.5
[evolve]
initial = [0, 1]
times = { from = 0, to = 4, steps = 8 }
tolerance = 1e-10
`;

  it('--json prints exactly { times, observables } with every observable indexed by time first', () => {
    const dir = tmp();
    const spec = path.join(dir, 'rabi.toml');
    writeFileSync(spec, RABI);
    const r = runCli(['evolve', spec, '--json']);
    expect(r.code).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const out = JSON.parse(lines[0]);
    expect(Object.keys(out).sort()).toEqual(['observables', 'times']);
    // README, Quench dynamics: the observables of the ground-state output at each time, and the trace's own.
    expect(Object.keys(out.observables).sort()).toEqual([
      'energy',
      'level_mean',
      'norm',
      'pair_separation',
      'populations',
      'return_probability',
      'spread',
      'string_width',
    ]);
    expect(out.observables.pair_separation[0]).toEqual([
      [0, 1],
      [1, 0],
    ]); // levels 0 and 1 at t = 0
    expect(out.times).toHaveLength(9);
    expect(out.observables.populations).toHaveLength(9);
    expect(out.observables.populations[0]).toHaveLength(2); // [time][site][level]
    expect(out.observables.populations[0][0]).toHaveLength(2);
    // Two independent molecules (no exchange), each Rabi-flopping: P1 of site 0 is sin^2(J t) (textbook).
    out.times.forEach((t: number, k: number) =>
      expect(out.observables.populations[k][0][1]).toBeCloseTo(Math.sin(0.5 * t) ** 2, 9),
    );
  });

  it('a ramp adds ground_overlap; bad input is one line naming the key, exit 2', () => {
    const dir = tmp();
    const spec = path.join(dir, 'rabi.toml');
    writeFileSync(spec, RABI);
    const r = runCli([
      'evolve',
      spec,
      '--json',
      '--set',
      'evolve.ramp={"key":"exchange.strength","from":0,"to":1,"duration":2,"steps":10}',
    ]);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).observables.ground_overlap).toHaveLength(9);
    const bad = runCli([
      'evolve',
      spec,
      '--set',
      'evolve.ramp={"key":"exchange.strenth","from":0,"to":1,"duration":2}',
    ]);
    expect(bad.code).toBe(2);
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
    expect(bad.stderr).toMatch(/evolve\.ramp\.key/);
  });

  it('runs as a scan axis: one trace per point, summarised by `trace` as CSV and JSON', () => {
    const dir = tmp();
    const spec = path.join(dir, 'scan.toml');
    writeFileSync(spec, RABI + '\n[scan]\n[[scan.axis]]\nkey = "levels.tunnelling"\nvalues = [0.5, 1.0]\n');
    const out = path.join(dir, 'run');
    const r = runCli(['evolve', spec, '--out', out, '--json']);
    expect(r.code).toBe(0);
    const traces = JSON.parse(r.stdout);
    expect(traces).toHaveLength(2);
    expect(traces[1]['levels.tunnelling']).toBe(1);
    // Rabi's formula at each point's J.
    for (const t of traces) {
      const J = t['levels.tunnelling'];
      t.times.forEach((time: number, k: number) =>
        expect(t.observables.populations[k][0][1]).toBeCloseTo(Math.sin(J * time) ** 2, 9),
      );
    }
    const csv = runCli(['trace', out, '--csv']);
    expect(csv.code).toBe(0);
    const rows = csv.stdout.trim().split('\n');
    expect(rows[0].split(',').slice(0, 5)).toEqual(['point', 'levels.tunnelling', 'frame', 'time', 'time_ms']);
    expect(rows).toHaveLength(1 + 2 * 9);
    const long = runCli(['trace', out, '--long']);
    expect(long.stdout.trim().split('\n')).toHaveLength(1 + 2 * 9 * (2 * 2 + 2 + 2));
    const json = JSON.parse(runCli(['trace', out, '--json']).stdout);
    expect(json).toEqual(traces);
  });

  it('itinerant kinds: evolve --json and trace --json carry density, double_occupancy and pair_separation at every time', () => {
    const dir = tmp();
    const spec = path.join(dir, 'bosons.toml');
    writeFileSync(
      spec,
      `[chain]\nsites = 2\n[levels]\ncount = 2\n[particles]\nkind = "boson"\nnumber = 2\nhopping = 0.7\n[evolve]\ninitial = [0, 1]\ntimes = { from = 0, to = 1, steps = 2 }\n`,
    );
    const out = path.join(dir, 'run');
    const direct = JSON.parse(runCli(['evolve', spec, '--json']).stdout);
    const r = runCli(['evolve', spec, '--out', out, '--json']);
    expect(r.code).toBe(0);
    const [fromRun] = JSON.parse(runCli(['trace', out, '--json']).stdout);
    for (const observables of [direct.observables, fromRun.observables]) {
      for (const name of [
        'density',
        'double_occupancy',
        'pair_separation',
        'one_body_density_matrix',
        'condensate_fraction',
      ]) {
        expect(observables[name]).toHaveLength(3);
      }
      // t = 0: one boson per site, in levels 0 and 1 (the initial state as written).
      expect(observables.density[0]).toEqual([1, 1]);
      expect(observables.double_occupancy[0]).toEqual([0, 0]);
      expect(observables.pair_separation[0]).toEqual([
        [0, 1],
        [1, 0],
      ]);
    }
    expect(fromRun.observables.density).toEqual(direct.observables.density);
  });

  it('the readable table shows ms and Hz next to model units with [units]', () => {
    const dir = tmp();
    const spec = path.join(dir, 'lab.toml');
    writeFileSync(
      spec,
      `[chain]\nsites = 3\n[levels]\ncount = 2\n[units]\ndipole_debye = 1\nlattice_spacing_nm = 500\nrabi_khz = 2\n[evolve]\ntimes = { from = 0, to = 1, steps = 4 }\ntime_unit = "ms"\n`,
    );
    const r = runCli(['evolve', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/energy unit\s+1 = h x 1 kHz/);
    expect(r.stdout).toMatch(/t \[ms\]/);
    expect(r.stdout).toMatch(/energy \[Hz\]/);
    // V = (1 D)^2 / (3 * 4 pi eps0 (500 nm)^3) / h = 402.45 Hz (see tests/spec/units.test.ts for the arithmetic).
    expect(r.stdout).toMatch(/V = 402\.45 Hz/);
  });
});
