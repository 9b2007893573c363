// Level crossings against an exactly solvable case: the XX ring.
//
// A pinned periodic chain of 2-level molecules with no microwave tunnelling and exchange V is
//   H = V sum_i (s+_i s-_{i+1} + h.c.) + Delta sum_i n_i,  n_i in {0, 1},
// with the total level charge q = sum_i n_i conserved. The Jordan-Wigner map makes it free fermions
// hopping with amplitude V; the ring's closing bond picks up (-1)^(q-1), so the fermions see a
// periodic ring for odd q and an antiperiodic one for even q (Lieb, Schultz and Mattis, Ann. Phys.
// 16, 407 (1961)). The lowest energy with charge q is the sum of the q lowest 2V cos k + Delta, k in
// 2 pi m / L (q odd) or 2 pi (m + 1/2) / L (q even), exactly linear in Delta; the ground charge
// steps where two sectors' lines meet on their lower envelope. The closed form is checked against
// ml-matrix's dense eigensolver first.

import { beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { gapAboveGround } from '../../src/point/solvePoint.js';
import { CROSSING_OVERLAP, detectCrossings } from '../../src/analysis/crossings.js';
import { analyseScan, analysisText, PEAK_FIT_CHI2_LIMIT, type AnalysisInput } from '../../src/analysis/transitions.js';
import type { PointRecord } from '../../src/point/solvePoint.js';
import { runCli } from '../support/cli.js';

type Analysis = ReturnType<typeof analyseScan>;

/** Lowest energy with charge q at Delta = 0 (free fermions, parity-dependent boundary twist). */
function closedFormSectorEnergy(L: number, V: number, q: number): number {
  const shift = q % 2 === 1 ? 0 : 0.5;
  const eps = Array.from({ length: L }, (_, m) => 2 * V * Math.cos((2 * Math.PI * (m + shift)) / L)).sort(
    (a, b) => a - b,
  );
  return eps.slice(0, q).reduce((s, e) => s + e, 0);
}

/** Where the ground charge changes, from the lower envelope of E(q) + q Delta, in ascending Delta. */
function closedFormCrossings(L: number, V: number): { position: number; from: number; to: number }[] {
  const S = Array.from({ length: L + 1 }, (_, q) => closedFormSectorEnergy(L, V, q));
  // At Delta -> -inf the ground is q = L; walk up in Delta, always to the next line to meet.
  const out = [];
  let q = L;
  let at = -Infinity;
  while (q > 0) {
    let best: { r: number; d: number } | null = null;
    for (let r = 0; r < q; r++) {
      const d = (S[r] - S[q]) / (q - r); // S[q] + q d = S[r] + r d
      if (d > at && (!best || d < best.d - 1e-12 || (Math.abs(d - best.d) <= 1e-12 && r < best.r))) best = { r, d };
    }
    out.push({ position: best!.d, from: q, to: best!.r });
    at = best!.d;
    q = best!.r;
  }
  return out;
}

/** The charge-q block of the XX ring at Delta = 0 (bit i of a state = level of site i), built directly. */
function denseSectorGround(L: number, V: number, q: number): number {
  const states = [];
  for (let s = 0; s < 1 << L; s++) if (popcount(s) === q) states.push(s);
  const index = new Map(states.map((s, k) => [s, k]));
  const H = Matrix.zeros(states.length, states.length);
  for (const [k, s] of states.entries()) {
    for (let i = 0; i < L; i++) {
      const j = (i + 1) % L;
      // s+_i s-_j + s-_i s+_j swaps the levels of i and j when they differ.
      if (((s >> i) & 1) !== ((s >> j) & 1)) H.set(index.get(s ^ (1 << i) ^ (1 << j))!, k, V);
    }
  }
  if (states.length === 1) return H.get(0, 0);
  return Math.min(...new EigenvalueDecomposition(H, { assumeSymmetric: true }).realEigenvalues);
}

function popcount(s: number): number {
  let c = 0;
  for (; s; s &= s - 1) c++;
  return c;
}

const L = 6;
const V = 1;

describe('the XX ring in closed form', () => {
  it('matches a dense diagonalization of every charge sector', () => {
    for (const size of [3, 4, 5, 6]) {
      for (let q = 0; q <= size; q++)
        expect(closedFormSectorEnergy(size, V, q)).toBeCloseTo(denseSectorGround(size, V, q), 10);
    }
  });

  it('has its ground charge step once per unit at L = 6, symmetric about Delta = 0', () => {
    const c = closedFormCrossings(L, V);
    expect(c.map((x) => [x.from, x.to])).toEqual([
      [6, 5],
      [5, 4],
      [4, 3],
      [3, 2],
      [2, 1],
      [1, 0],
    ]);
    for (let k = 0; k < c.length; k++) expect(c[k].position).toBeCloseTo(-c[c.length - 1 - k].position, 12);
  });
});

const SPEC = (sites: number, boundary: string, from: number, to: number, steps: number) => `
[chain]
sites = ${sites}
boundary = "${boundary}"
[levels]
count = 2
tunnelling = 0
detuning = [0, 0]
[exchange]
strength = ${V}
[solve]
states = 2
[[scan.axis]]
key = "levels.detuning[1]"
from = ${from}
to = ${to}
steps = ${steps}
`;

let lastRun = '';

function scanAnalysis(name: string, spec: string): Analysis {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-crossings-'));
  writeFileSync(path.join(dir, `${name}.toml`), spec);
  const run = (lastRun = path.join(dir, 'run'));
  const r = runCli(['scan', path.join(dir, `${name}.toml`), '--out', run, '--workers', '1', '--quiet']);
  expect(r.code, r.stderr).toBe(0);
  const a = runCli(['summary', run, '--analysis', '--json']);
  expect(a.code, a.stderr).toBe(0);
  return JSON.parse(a.stdout) as Analysis;
}

describe('crossings reported by summary --analysis --json', () => {
  let ring: Analysis;
  let ringRun: string;
  beforeAll(() => {
    // Grid step 0.1 with no grid point on a crossing; the positions must come from the sector energies.
    ring = scanAnalysis('xx-ring', SPEC(L, 'periodic', -2.95, 2.95, 60));
    ringRun = lastRun;
  });

  it('names the crossings in the text summary and draws the lowest level of each sector in the report', () => {
    const text = runCli(['summary', ringRun, '--analysis']);
    expect(text.stdout).toContain('level crossings along levels.detuning[1]');
    expect(text.stdout).toContain('q=4 m=0 P=+ -> q=3');
    // The CSV has one row per crossing, with the same positions (plain RFC 4180, no quoted fields here).
    const csv = runCli(['summary', ringRun, '--analysis', '--csv']);
    const [header, ...rows] = csv.stdout
      .trim()
      .split('\n')
      .map((l) => l.split(','));
    const crossingRows = rows
      .filter((r) => r[0] === 'crossing')
      .map((r) => Object.fromEntries(header.map((h, k) => [h, r[k]])));
    expect(crossingRows.map((r) => Number(r.position))).toEqual(ring.lines[0].crossings.map((c) => c.position));
    expect(crossingRows[0].from).toBe('q=6 m=0 P=+');
    const out = path.join(path.dirname(ringRun), 'report.html');
    const r = runCli(['report', ringRun, '--out', out]);
    expect(r.code, r.stderr).toBe(0);
    const html = readFileSync(out, 'utf8');
    expect(html).toContain('Sector levels');
    expect(html).toContain('lowest level of each sector');
    expect(html).toContain('level crossing at');
  });

  it('finds every charge step of the XX ring at the closed-form detuning to 1e-6, with both sectors', () => {
    const expected = closedFormCrossings(L, V);
    expect(ring.lines).toHaveLength(1);
    const found = ring.lines[0].crossings;
    expect(found).toHaveLength(expected.length);
    for (let k = 0; k < expected.length; k++) {
      expect(found[k].detected_by).toBe('sectors');
      expect(found[k].interpolated).toBe(true);
      expect(Math.abs(found[k].position - expected[k].position)).toBeLessThan(1e-6);
      expect(found[k].from?.charge).toBe(expected[k].from);
      expect(found[k].to?.charge).toBe(expected[k].to);
      expect(found[k].between[0]).toBeLessThanOrEqual(found[k].position);
      expect(found[k].between[1]).toBeGreaterThanOrEqual(found[k].position);
    }
  });

  it('reports the indicators that sit on a crossing as crossings, not peaks', () => {
    const indicators = ring.lines[0].indicators;
    for (const name of ['gap', 'fidelity', 'curvature']) {
      const ind = indicators.find((i) => i.name === name)!;
      expect(ind.kind, name).toBe('crossing');
      expect(ring.lines[0].crossings).toContainEqual(ind.crossing);
    }
    expect(indicators.find((i) => i.name === 'gap')!.uses).toBe('gap_above_ground');
  });

  it('does not call the fidelity across an exact crossing of two sites a flat curve (closed form: Delta = +-V)', () => {
    // Open pair: q = 1 has -|V| + Delta, q = 0 has 0, q = 2 has 2 Delta (diagonalize the 2x2 block by hand).
    const pair = scanAnalysis('pair', SPEC(2, 'open', -1.95, 1.95, 40));
    const line = pair.lines[0];
    expect(line.crossings.map((c) => c.position).every((p, k) => Math.abs(p - [-V, V][k]) < 1e-9)).toBe(true);
    expect(line.crossings).toHaveLength(2);
    const fidelity = line.indicators.find((i) => i.name === 'fidelity')!;
    expect(fidelity.kind).toBe('crossing');
    expect([-V, V]).toContain(Math.round(fidelity.crossing!.position * 1e9) / 1e9);
  });
});

describe('gap above the ground level', () => {
  it('skips copies of the ground level within the degeneracy window (definition)', () => {
    expect(gapAboveGround([-1, -1 + 1e-12, -1 + 2e-12, 0.5], 1e-9)).toBeCloseTo(1.5, 12);
    expect(gapAboveGround([-1, -1 + 1e-12], 1e-9)).toBeNull();
    expect(gapAboveGround([-1, -0.25], 1e-9)).toBeCloseTo(0.75, 12);
  });

  it('is the distance to the next level on a 4-fold degenerate XX ring of 3 sites (closed form: 1)', () => {
    // Delta = 0, L = 3: q = 1 and q = 2 both have -V twice (m = 1, 2), q = 0 and q = 3 have 0.
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-gap-'));
    const spec = SPEC(3, 'periodic', 0, 0, 1)
      .replace(/\[\[scan\.axis\]\][\s\S]*$/, '')
      .replace('states = 2', 'states = 6');
    writeFileSync(path.join(dir, 'ring3.toml'), spec);
    const r = runCli(['solve', path.join(dir, 'ring3.toml'), '--json']);
    expect(r.code, r.stderr).toBe(0);
    const record = JSON.parse(r.stdout) as { gap: number; gap_above_ground: number; energies: number[] };
    expect(record.energies[0]).toBeCloseTo(closedFormSectorEnergy(3, V, 1), 9);
    expect(Math.abs(record.gap)).toBeLessThan(1e-9);
    expect(record.gap_above_ground).toBeCloseTo(0 - closedFormSectorEnergy(3, V, 1), 9);
  });
});

describe('finite-size fits of peak positions are flagged', () => {
  // Gap minima at p(L) on the grid 0, 0.5, ..., 5: the gap is a parabola in x, so the refined minimum
  // is p(L) exactly (a parabola through three points of a parabola is that parabola).
  function input(position: (L: number) => number): AnalysisInput {
    const xs = Array.from({ length: 11 }, (_, k) => k / 2);
    const sizes = [4, 6, 8];
    const record = (gap: number): PointRecord => ({
      energies: [-1, -1 + gap],
      gap,
      observables: { populations: [], level_mean: [], spread: [], string_width: 0, pair_separation: [] },
      basis: { kind: 'pinned', dimension: 4, sites: 2, levels: 2, operator: 'on-the-fly', nonzeros: 0 },
      solver: {
        method: 'dense',
        iterations: 1,
        restarts: 0,
        residuals: [0, 0],
        converged: true,
        tolerance: 1e-9,
        degeneracy: 1,
        degeneracy_complete: true,
        seconds: 0,
        memory_estimate_bytes: 0,
      },
    });
    return {
      axes: [
        { key: 'chain.sites', values: sizes },
        { key: 'exchange.strength', values: xs },
      ],
      zip: false,
      points: sizes.flatMap((size, i) =>
        xs.map((x, k) => ({
          index: i * xs.length + k,
          params: { 'chain.sites': size, 'exchange.strength': x },
          record: record((x - position(size)) ** 2 + 0.1),
          overlapPrevious: null,
        })),
      ),
    };
  }

  it('an extrapolation beyond the end of the scan: positions 5.5 - 6/L go to 5.5 for a scan ending at 5', () => {
    const analysis = analyseScan(input((L) => 5.5 - 6 / L));
    const fit = analysis.peak_fits.find((f) => f.indicator === 'gap')!;
    expect(fit.fit.extrapolated).toBeCloseTo(5.5, 9);
    expect(fit.flags).toEqual(['outside_scan']);
    expect(analysisText(analysis)).toContain('outside the scan');
  });

  it('a fit whose chi2/dof is far above the limit: positions 4, 2, 4 against 1/L (by hand, chi2/dof = 41)', () => {
    const analysis = analyseScan(input((L) => (L === 6 ? 2 : 4)));
    const fit = analysis.peak_fits.find((f) => f.indicator === 'gap')!;
    expect(fit.fit.chi2 / fit.fit.dof).toBeCloseTo(41.1, 0);
    expect(fit.fit.chi2 / fit.fit.dof).toBeGreaterThan(PEAK_FIT_CHI2_LIMIT);
    expect(fit.flags).toEqual(['poor_fit']);
    expect(analysisText(analysis)).toContain(`chi2/dof > ${PEAK_FIT_CHI2_LIMIT}`);
  });
});

describe('crossings from sector energies, line by line (elementary algebra)', () => {
  const label = (charge: number) => ({ momentum: null, parity: null, level_flip: null, charge });
  const point = (x: number, energies: number[], overlapPrevious: number | null = null) => ({
    x,
    sectors: energies.map((lowest, q) => ({ label: label(q), lowest })),
    tolerance: 1e-9,
    overlapPrevious,
  });

  it('follows the lower envelope through a sector that is above both ends but lowest in between', () => {
    // A = 2t, B = 2 - 2t, C = 0.5 on t in [0, 1]: C takes over at t = 0.25 and hands over to B at t = 0.75.
    const found = detectCrossings([point(0, [0, 2, 0.5]), point(1, [2, 0, 0.5])]);
    expect(found.map((c) => [c.from?.charge, c.to?.charge])).toEqual([
      [0, 2],
      [2, 1],
    ]);
    expect(found[0].position).toBeCloseTo(0.25, 14);
    expect(found[1].position).toBeCloseTo(0.75, 14);
  });

  it('counts a crossing on a grid point once, and copies of one level never', () => {
    // A = -x, B = x - 2 meet at x = 1; D is a copy of A (level with it at every point).
    const found = detectCrossings([point(0, [0, -2, 0]), point(1, [-1, -1, -1]), point(2, [-2, 0, -2])]);
    expect(found).toHaveLength(1);
    expect(found[0].position).toBe(1);
    expect(found[0].from?.charge).toBe(1);
  });

  it('without sector energies, takes an overlap below CROSSING_OVERLAP as a crossing at the midpoint', () => {
    const bare = (x: number, overlapPrevious: number | null) => ({
      x,
      sectors: null,
      tolerance: 1e-9,
      overlapPrevious,
    });
    const found = detectCrossings([bare(0, null), bare(1, 0.9), bare(2, CROSSING_OVERLAP / 10), bare(3, 0.99)]);
    expect(found).toHaveLength(1);
    expect(found[0]).toMatchObject({
      position: 1.5,
      between: [1, 2],
      interpolated: false,
      detected_by: 'overlap',
      from: null,
      to: null,
    });
  });
});
