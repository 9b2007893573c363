// The demo's 2D scenario (issue 19): its spec, run folder and report are written; its smallest point
// agrees with the plain dense build of docs/model.md (tests/support/occupationReference.ts, ml-matrix's
// dense eigensolver), the pair factors worked out here from the V (1 - 3 cos^2 theta) / r^3
// for the documented row-major 3x3 array; the printed couplings follow the same law, and the printed
// magic angle is arccos(1/sqrt 3). The command line's demo prints closing commands that run.
import { mkdtempSync, readFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  ARRAY_DEMO_FIELDS,
  ARRAY_DEMO_SPEC_TOML,
  magicTilt,
  planArrayDemo,
  runArrayDemo,
  tiltDegrees,
} from '../../src/demo/array.js';
import { loadScanRun } from '../../src/scan/scanRun.js';
import { buildDense, groundMixture, observablesFrom, type ModelDescription } from '../support/occupationReference.js';
import { ROOT, runCli } from '../support/cli.js';

/** Textbook magic angle of the dipole-dipole interaction (Jackson, Classical Electrodynamics, eq. 4.28). */
const MAGIC_DEG = (Math.acos(1 / Math.sqrt(3)) * 180) / Math.PI;

/** The 3x3 open square, sites x + 3y at (x, y, 0), every pair dipolar: f_ij = (1 - 3 cos^2 theta_ij) / r_ij^3. */
function referenceModel(levels: number, field: readonly number[]): ModelDescription {
  const L = 9;
  const norm = Math.hypot(field[0], field[1], field[2]);
  const factors = Array.from({ length: L }, (_, i) =>
    Array.from({ length: L }, (_, j) => {
      if (j <= i) return 0;
      const d = [(j % 3) - (i % 3), Math.floor(j / 3) - Math.floor(i / 3), 0];
      const r = Math.hypot(d[0], d[1], d[2]);
      const c = (d[0] * field[0] + d[1] * field[1] + d[2] * field[2]) / (r * norm);
      return (1 - 3 * c * c) / r ** 3;
    }),
  );
  return {
    sites: L,
    periodic: false,
    levels,
    ring: false,
    tunnelling: new Array<number>(levels - 1).fill(1),
    phase: new Array<number>(levels - 1).fill(0),
    detuning: new Array<number>(levels).fill(0),
    exchange: 3,
    exchangeRange: 'dipolar',
    exchangeCutoff: null,
    // Rigid-rotor weights of docs/model.md: c_n = 3 (n+1)^2 / ((2n+1)(2n+3)).
    weights: Array.from({ length: levels - 1 }, (_, n) => (3 * (n + 1) ** 2) / ((2 * n + 1) * (2 * n + 3))),
    ising: 0,
    moments: new Array<number>(levels).fill(0),
    isingRange: 'nearest',
    isingCutoff: null,
    kind: 'pinned',
    particles: L,
    hopping: 0,
    maxPerSite: 1,
    onsite: 0,
    exchangeFactors: factors,
    isingFactors: factors.map((row) => row.map(() => 0)),
  };
}

const X_BONDS = [0, 1, 3, 4, 6, 7].map((i) => [i, i + 1]);
const Y_BONDS = [0, 1, 2, 3, 4, 5].map((i) => [i, i + 3]);
const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
const maxDiff = (a: number[], b: number[]) => Math.max(...a.map((x, k) => Math.abs(x - b[k])));

/** A printed number (3 significant digits, docs: fmt) against the value it rounds. */
function expectPrinted(printed: string, exact: number): void {
  expect(Math.abs(Number(printed) - exact)).toBeLessThanOrEqual(0.005 * Math.abs(exact) + 1e-12);
}

describe('the demo 2D array', () => {
  const root = mkdtempSync(path.join(os.tmpdir(), 'rungchain-array-demo-'));
  const where = planArrayDemo(root);
  const lines: string[] = [];
  const ran = runArrayDemo((line) => lines.push(...line.split('\n')), 'rungchain', where);

  it('writes its spec (the README example file), its run folder and its report', async () => {
    await ran;
    expect(readFileSync(where.specFile, 'utf8')).toBe(ARRAY_DEMO_SPEC_TOML);
    expect(readFileSync(path.join(ROOT, 'examples', 'tilted-array.toml'), 'utf8')).toBe(ARRAY_DEMO_SPEC_TOML);
    const run = loadScanRun(where.runDir);
    expect(run.counts).toEqual({
      total: 2 * ARRAY_DEMO_FIELDS.length,
      done: 2 * ARRAY_DEMO_FIELDS.length,
      failed: 0,
      pending: 0,
    });
    expect(readFileSync(where.reportFile, 'utf8')).toMatch(/^<!DOCTYPE html>/i);
    expect(lines.join('\n')).toContain(path.resolve(where.reportFile));
  });

  it('agrees on its smallest point (2 levels, field normal to the array) with the dense reference', async () => {
    await ran;
    const field = ARRAY_DEMO_FIELDS[0];
    const record = loadScanRun(where.runDir).rows.find(
      (r) => r.params['levels.count'] === 2 && JSON.stringify(r.params['lattice.field']) === JSON.stringify(field),
    )!.record!.result!;
    const model = referenceModel(2, field);
    const h = buildDense(model);
    expect(h.dim).toBe(512);
    const g = groundMixture(h, 1e-9);
    expect(g.degeneracy).toBe(1);
    expect(maxDiff(record.energies, g.values.slice(0, 2))).toBeLessThan(1e-8 * Math.abs(g.values[0]));
    const p = Array.from({ length: h.dim }, (_, s) => g.projectorRe[s * h.dim + s]);
    const ref = observablesFrom(model, h.configs, p);
    const o = record.observables;
    expect(Math.abs(o.string_width - ref.string_width)).toBeLessThan(1e-7);
    expect(maxDiff(o.spread, ref.spread)).toBeLessThan(1e-7);
    // docs/model.md: pair_separation = <n_i^2> + <n_j^2> - 2 <n_i n_j>, so the connected correlation
    // <n_i n_j> - <n_i><n_j> follows from the reference's moments.
    const second = ref.spread.map((s, i) => s + ref.level_mean[i] ** 2);
    const corr = (i: number, j: number) =>
      (second[i] + second[j] - ref.pair_separation[i][j]) / 2 - ref.level_mean[i] * ref.level_mean[j];
    for (const [i, j] of [...X_BONDS, ...Y_BONDS])
      expect(Math.abs(o.level_correlation![i][j] - corr(i, j))).toBeLessThan(1e-7);
    // The printed row of tilt 0: V_x/V, V_y/V, then the mean correlation along x and y for N = 2.
    const row = lines
      .find((l) => /^0\s/.test(l))!
      .trim()
      .split(/\s+/);
    expectPrinted(row[3], mean(X_BONDS.map(([i, j]) => corr(i, j))));
    expectPrinted(row[4], mean(Y_BONDS.map(([i, j]) => corr(i, j))));
  });

  it('prints the couplings of the dipole law and the magic angle arccos(1/sqrt 3)', async () => {
    await ran;
    // Textbook dipole-dipole law: an x bond makes 90 deg - tilt with the field, so V_x / V = 1 - 3 sin^2(tilt);
    // a y bond stays perpendicular to it, V_y / V = 1.
    for (const field of ARRAY_DEMO_FIELDS) {
      const tilt = tiltDegrees(field);
      const row = lines
        .find((l) => l.startsWith(`${Number(tilt.toPrecision(3))} `))!
        .trim()
        .split(/\s+/);
      const s = Math.sin((tilt * Math.PI) / 180);
      expect(Math.abs(Number(row[1]) - (1 - 3 * s * s))).toBeLessThanOrEqual(0.005 * Math.abs(1 - 3 * s * s) + 1e-12);
      expect(Number(row[2])).toBe(1);
    }
    const statement = lines.join(' ').match(/vanishes at a tilt of ([\d.]+) deg: the field then makes ([\d.]+) deg/)!;
    expect(Math.abs(Number(statement[2]) - MAGIC_DEG)).toBeLessThanOrEqual(5e-5);
    expect(Math.abs(Number(statement[1]) - (90 - MAGIC_DEG))).toBeLessThanOrEqual(5e-5);
    expect(MAGIC_DEG).toBeCloseTo(54.7356, 4);
    // What the demo says of the correlations holds in its run folder: equal along x and y with the field
    // normal to the square (its quarter-turn symmetry, common practice), x nearly uncorrelated at the
    // magic tilt, x the stronger at 90 deg.
    const rows = loadScanRun(where.runDir).rows;
    for (const N of [2, 3]) {
      const at = (field: readonly number[]) => {
        const c = rows.find(
          (r) => r.params['levels.count'] === N && JSON.stringify(r.params['lattice.field']) === JSON.stringify(field),
        )!.record!.result!.observables.level_correlation!;
        return { x: mean(X_BONDS.map(([i, j]) => c[i][j])), y: mean(Y_BONDS.map(([i, j]) => c[i][j])) };
      };
      const normal = at([0, 0, 1]);
      expect(Math.abs(normal.x - normal.y)).toBeLessThan(1e-8);
      const magic = at([1, 0, Math.SQRT2]);
      expect(Math.abs(magic.x)).toBeLessThan(0.1 * Math.abs(magic.y));
      const along = at([1, 0, 0]);
      expect(Math.abs(along.x)).toBeGreaterThan(Math.abs(along.y));
    }
    // The bisection on the solver's own couplings lands on the textbook angle.
    const raw = where.raw;
    expect(Math.abs(magicTilt(raw) - (Math.PI / 2 - Math.acos(1 / Math.sqrt(3))))).toBeLessThan(1e-12);
  });
});

describe('the demo on the command line, with its 2D array', () => {
  it('names the array run folder first and closes with commands that run', () => {
    const cwd = mkdtempSync(path.join(os.tmpdir(), 'rungchain-demo-array-'));
    const r = runCli(['demo'], { cwd });
    expect(r.code, r.stderr).toBe(0);
    const head = r.stdout.split('\n').slice(0, 6).join('\n');
    expect(head).toContain(path.join(cwd, 'runs', 'demo-array.toml'));
    expect(r.stdout).toMatch(/the field then makes 54\.7356 deg with the x bonds/);
    // Every command the array part suggests (after the program's own start) runs from where the demo ran.
    const part = r.stdout.slice(r.stdout.indexOf('A 2D array'));
    const commands = [...part.matchAll(/`([^`]+)`/g)].map((m) => m[1]).filter((c) => / (summary|scan) /.test(c));
    expect(commands).toHaveLength(2);
    for (const command of commands) {
      const args = command.split(' ').slice(command.split(' ').findIndex((w) => w === 'summary' || w === 'scan'));
      const run = runCli(args, { cwd });
      expect(run.code, `${command}: ${run.stderr}`).toBe(0);
    }
  }, 120_000);
});
