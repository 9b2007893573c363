import { beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import {
  OBSERVABLE_FIT_CHI2_LIMIT,
  analyseScan,
  analysisCsv,
  analysisText,
  observableValue,
  type AnalysisInput,
} from '../../src/analysis/transitions.js';
import { renderReport } from '../../src/output/report/report.js';
import { fidelitySusceptibility, findPeak } from '../../src/analysis/indicators.js';
import { InputError } from '../../src/errors/errors.js';
import type { PointRecord } from '../../src/point/solvePoint.js';
import { runCli } from '../support/cli.js';
import { isingFidelity } from '../support/ising.js';

function record(sites: number, e0: number, width: number, extra: Record<string, unknown> = {}): PointRecord {
  return {
    energies: [e0, e0 + 1],
    gap: 1,
    observables: {
      populations: Array.from({ length: sites }, () => [1, 0]),
      level_mean: Array.from({ length: sites }, (_, i) => i),
      spread: Array.from({ length: sites }, () => 0),
      string_width: width,
      pair_separation: [],
      ...extra,
    },
    basis: { kind: 'pinned', dimension: 2 ** sites, sites, levels: 2, operator: 'on-the-fly', nonzeros: 0 },
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
  };
}

describe('analysis of a scan in memory', () => {
  it('reads scalars by name', () => {
    const r = record(4, -6, 0.3, {
      entanglement: [
        { cut: 1, von_neumann: 0.1, renyi_2: 0.05, spectrum: [] },
        { cut: 2, von_neumann: 0.7, renyi_2: 0.6, spectrum: [] },
      ],
    });
    expect(observableValue(r, 'E0')).toBe(-6);
    expect(observableValue(r, 'E1')).toBe(-5);
    expect(observableValue(r, 'E0/L')).toBe(-1.5);
    expect(observableValue(r, 'entropy')).toBe(0.7); // the half-chain cut, 2 of 4 sites
    expect(observableValue(r, 'renyi_2')).toBe(0.6);
    expect(observableValue(r, 'level_mean')).toBe(1.5);
    expect(observableValue(r, 'string_width')).toBe(0.3);
    expect(observableValue(r, 'nonsense')).toBeUndefined();
  });

  // Values built from a known law y = a + b / L^2 at every parameter value: the fits must return a
  // exactly (least squares reproduces data that lie on the model; textbook).
  const sizes = [4, 6, 8];
  const xs = [0, 0.5, 1, 1.5, 2];
  const law = (x: number, L: number) => ({ a: 1 + x * x, b: 2 - x, value: 1 + x * x + (2 - x) / L ** 2 });
  const input: AnalysisInput = {
    axes: [
      { key: 'chain.sites', values: sizes },
      { key: 'exchange.strength', values: xs },
    ],
    zip: false,
    points: sizes.flatMap((L, i) =>
      xs.map((x, k) => ({
        index: i * xs.length + k,
        params: { 'chain.sites': L, 'exchange.strength': x },
        record: record(L, L * law(x, L).value, 0.1 * x),
        overlapPrevious: k === 0 ? null : 0.999,
      })),
    ),
  };

  it('groups lines by the other axes and fits any named observable against 1/L^p', () => {
    const analysis = analyseScan(input, { fit: ['E0/L'], power: 2 });
    expect(analysis.parameter).toBe('exchange.strength');
    expect(analysis.overlaps).toBe(true);
    expect(analysis.lines.map((l) => l.fixed)).toEqual(sizes.map((L) => ({ 'chain.sites': L })));
    expect(analysis.observable_fits).toHaveLength(xs.length);
    for (const f of analysis.observable_fits) {
      const x = f.fixed['exchange.strength'] as number;
      expect(f.size).toBe('chain.sites');
      expect(f.fit.extrapolated).toBeCloseTo(law(x, Infinity).a, 10);
      expect(f.fit.coefficients[1]).toBeCloseTo(law(x, 1).b, 10);
      f.fit.residuals.forEach((r) => expect(Math.abs(r)).toBeLessThan(1e-12));
    }
  });

  it('never reports a negative gap: a fit of a closing gap gives 0, and says what the fit gave', () => {
    // gap = 1/L - 0.01 at every parameter value: the straight line in 1/L meets zero before L = inf.
    const closing: AnalysisInput = {
      ...input,
      points: input.points.map((p) => {
        const L = p.params['chain.sites'] as number;
        return { ...p, record: { ...p.record!, gap: 1 / L - 0.01 } };
      }),
    };
    const analysis = analyseScan(closing, { fit: ['gap'] });
    expect(analysis.observable_fits).toHaveLength(xs.length);
    for (const f of analysis.observable_fits) {
      expect(f.fit.extrapolated).toBe(0);
      expect(f.fit.bounded).toBe(true);
      expect(f.fit.coefficients[0]).toBeCloseTo(-0.01, 10);
    }
    expect(analysisText(analysis)).toMatch(/\b0 ± [^\n]*\(fit -0\.01\)/);
    // A gap cannot be negative: the fit's a0 = -0.01 left the values it can take.
    for (const f of analysis.observable_fits) expect(f.flags).toEqual(['outside_range']);
    expect(analysisText(analysis)).toContain('outside the possible values');
  });

  it('names what it cannot do', () => {
    expect(() => analyseScan(input, { fit: ['colour'] })).toThrow(InputError);
    expect(() => analyseScan(input, { parameter: 'levels.count' })).toThrow(/not a scanned axis/);
    // Indicators along the outer axis: no overlaps between its neighbours, and sizes are not a parameter.
    const along = analyseScan({
      ...input,
      axes: [
        { key: 'exchange.strength', values: xs },
        { key: 'chain.sites', values: sizes },
      ],
    });
    expect(along.overlaps).toBe(false);
    expect(along.notes.join(' ')).toMatch(/innermost axis/);
  });
});

// Observable fits get the peak fits' check: chi2/dof, with sigma = 1% of the values' spread over
// the sizes, above the limit flags `poor_fit`. Data from a known law: E0/L = 1 + 2/L^2 lies on the
// fitted form a0 + a1/L^2 (least squares reproduces it exactly; textbook), while an added 1/L term
// (E0/L = 1 + 2/L^2 + c/L) bends it away from the straight line in 1/L^2.
describe('finite-size fits of observables: the chi2/dof check', () => {
  const sizes = [4, 6, 8, 10];
  const inputFor = (law: (L: number) => number): AnalysisInput => ({
    axes: [{ key: 'chain.sites', values: sizes }],
    zip: false,
    points: sizes.map((L, index) => ({
      index,
      params: { 'chain.sites': L },
      record: record(L, L * law(L), 0.1),
      overlapPrevious: null,
    })),
  });

  /** A straight-line least-squares fit y = a + b x by the closed form (Numerical Recipes, 3rd ed., sec. 15.2), its chi2/dof with sigma. */
  function straightLineChi2(x: number[], y: number[], sigma: number): number {
    const n = x.length;
    const sx = x.reduce((s, v) => s + v, 0);
    const sy = y.reduce((s, v) => s + v, 0);
    const sxx = x.reduce((s, v) => s + v * v, 0);
    const sxy = x.reduce((s, v, i) => s + v * y[i], 0);
    const b = (n * sxy - sx * sy) / (n * sxx - sx * sx);
    const a = (sy - b * sx) / n;
    return y.reduce((s, v, i) => s + ((v - a - b * x[i]) / sigma) ** 2, 0) / (n - 2);
  }

  it('a law of the fitted form passes: chi2/dof near 0, no flags', () => {
    const analysis = analyseScan(
      inputFor((L) => 1 + 2 / L ** 2),
      { fit: ['E0/L'], power: 2 },
    );
    const [fit] = analysis.observable_fits;
    expect(fit.fit.extrapolated).toBeCloseTo(1, 12);
    expect(fit.scaled_chi2_dof).toBeLessThan(1e-12);
    expect(fit.flags).toEqual([]);
    // sigma: 1% of the spread of the values, 2/16 - 2/100 (from the law).
    expect(fit.residual_scale).toBeCloseTo(0.01 * (2 / 16 - 2 / 100), 14);
  });

  it('an added 1/L term is a poor fit: chi2/dof from the closed-form line fit, above the limit, flagged everywhere', () => {
    const law = (L: number) => 1 + 2 / L ** 2 + 1 / L;
    const analysis = analyseScan(inputFor(law), { fit: ['E0/L'], power: 2 });
    const [fit] = analysis.observable_fits;
    const values = sizes.map(law);
    const sigma = 0.01 * (Math.max(...values) - Math.min(...values));
    const expected = straightLineChi2(
      sizes.map((L) => 1 / L ** 2),
      values,
      sigma,
    );
    expect(fit.scaled_chi2_dof).toBeCloseTo(expected, 8);
    expect(expected).toBeGreaterThan(OBSERVABLE_FIT_CHI2_LIMIT);
    expect(fit.flags).toEqual(['poor_fit']);
    // The extrapolation it gives is 8% off the true a = 1 (the closed-form fit's intercept, 1.080).
    expect(fit.fit.extrapolated).toBeCloseTo(1.08, 2);
    expect(analysisText(analysis)).toContain(`chi2/dof > ${OBSERVABLE_FIT_CHI2_LIMIT}`);
    // CSV: the flags and the scaled chi2/dof on the observable_fit row.
    const [header, row] = analysisCsv(analysis, ['chain.sites'])
      .trim()
      .split('\n')
      .map((l) => l.split(','));
    const cell = (name: string) => row[header.indexOf(name)];
    expect(cell('kind')).toBe('observable_fit');
    expect(cell('flags')).toBe('poor_fit');
    expect(Number(cell('scaled_chi2_dof'))).toBe(fit.scaled_chi2_dof);
    // The report's fit table warns.
    const html = renderReport({ ...inputFor(law), title: 't', about: [], analysis, energyUnitHz: null });
    expect(html).toContain(`χ²/dof above ${OBSERVABLE_FIT_CHI2_LIMIT}`);
    // A small 1/L term (c = 0.1) bends the line too little to flag: chi2/dof about 0.58 by the closed form.
    const mild = analyseScan(
      inputFor((L) => 1 + 2 / L ** 2 + 0.1 / L),
      { fit: ['E0/L'], power: 2 },
    );
    expect(mild.observable_fits[0].scaled_chi2_dof).toBeCloseTo(0.578, 2);
    expect(mild.observable_fits[0].flags).toEqual([]);
  });
});

// ---------------------------------------------------------------------------------------------
// Through the command line, on a real scan of the transverse-field Ising ring

const FIELDS = Array.from({ length: 9 }, (_, k) => Number((0.8 + 0.025 * k).toFixed(3)));
const SIZES = [6, 8, 10];
const SPEC = `
[chain]
sites = 6
boundary = "periodic"
[levels]
count = 2
[ising]
strength = -4
moments = [-0.5, 0.5]
[solve]
states = 2
[[scan.axis]]
key = "chain.sites"
values = [${SIZES.join(', ')}]
[[scan.axis]]
key = "levels.tunnelling"
values = [${FIELDS.join(', ')}]
`;

let run: string;

beforeAll(() => {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-transitions-'));
  writeFileSync(path.join(dir, 'ising.toml'), SPEC);
  run = path.join(dir, 'run');
  // Two workers with three lines: lines are cut into pieces, and every piece after the first
  // solves its predecessor first, so no overlap goes missing.
  const r = runCli(['scan', path.join(dir, 'ising.toml'), '--out', run, '--workers', '2', '--quiet']);
  expect(r.code, r.stderr).toBe(0);
});

describe('summary of a scan: indicator peaks and finite-size fits', () => {
  it('has the overlap of every point with its neighbour, even where lines were cut between workers', () => {
    const rows = JSON.parse(runCli(['summary', run, '--json']).stdout) as Record<string, any>[];
    for (const row of rows) {
      const first = row['levels.tunnelling'] === FIELDS[0];
      expect(row.overlap_previous === null).toBe(first);
    }
  });

  it('finds the fidelity peaks of the exact solution and extrapolates them towards g = 1', () => {
    const r = runCli(['summary', run, '--analysis', '--json', '--power', '2']);
    expect(r.code, r.stderr).toBe(0);
    const analysis = JSON.parse(r.stdout);
    expect(analysis.parameter).toBe('levels.tunnelling');
    SIZES.forEach((L, k) => {
      const fidelity = analysis.lines[k].indicators.find((i: { name: string }) => i.name === 'fidelity');
      // The same peak search on the exact curve: Pfeuty-solution fidelity on the same pairs.
      const exact = fidelitySusceptibility(
        FIELDS.slice(1).map((g, j) => ({ from: FIELDS[j], to: g, overlap: isingFidelity(L, FIELDS[j], g) })),
        L,
      );
      expect(fidelity.peak.position).toBeCloseTo(findPeak(exact.x, exact.y)!.position, 5);
      expect(fidelity.peak.uncertainty).toBeCloseTo(0.025 / 2, 12);
    });
    const fit = analysis.peak_fits.find((f: { indicator: string }) => f.indicator === 'fidelity');
    expect(fit.fit.sizes).toEqual(SIZES);
    expect(Math.abs(fit.fit.extrapolated - 1)).toBeLessThan(0.02);
  });

  it('--analysis --csv: one row per peak and per fit, the same numbers as --analysis --json', () => {
    const args = ['summary', run, '--analysis', '--power', '2', '--fit', 'E0/L'];
    const analysis: ReturnType<typeof analyseScan> = JSON.parse(runCli([...args, '--json']).stdout);
    const r = runCli([...args, '--csv']);
    expect(r.code, r.stderr).toBe(0);
    // Plain RFC 4180 without quoted fields here: split on commas (common practice).
    const [header, ...lines] = r.stdout
      .trim()
      .split('\n')
      .map((l) => l.split(','));
    expect(header.slice(0, 4)).toEqual(['kind', 'chain.sites', 'levels.tunnelling', 'name']);
    const rows = lines.map((cells) => Object.fromEntries(header.map((h, k) => [h, cells[k]])));
    const peaks = rows.filter((row) => row.kind === 'peak');
    const expectedPeaks = analysis.lines.flatMap((l) =>
      l.indicators.flatMap((i) => (i.peak ? [{ sites: l.fixed['chain.sites'], name: i.name, peak: i.peak }] : [])),
    );
    expect(peaks).toHaveLength(expectedPeaks.length);
    expectedPeaks.forEach((e, k) => {
      expect(Number(peaks[k]['chain.sites'])).toBe(e.sites);
      expect(peaks[k].name).toBe(e.name);
      expect(Number(peaks[k].position)).toBe(e.peak.position);
      expect(Number(peaks[k].value)).toBe(e.peak.value);
      expect(peaks[k].refined).toBe(String(e.peak.refined));
    });
    const peakFits = rows.filter((row) => row.kind === 'peak_fit');
    expect(peakFits.map((row) => Number(row.extrapolated))).toEqual(analysis.peak_fits.map((f) => f.fit.extrapolated));
    const observableFits = rows.filter((row) => row.kind === 'observable_fit');
    expect(observableFits).toHaveLength(analysis.observable_fits.length);
    expect(observableFits[0].sizes).toBe(SIZES.join(';'));
    expect(observableFits.map((row) => Number(row['levels.tunnelling']))).toEqual(
      analysis.observable_fits.map((f) => f.fixed['levels.tunnelling']),
    );
  });

  it('prints them after the table', () => {
    const r = runCli(['summary', run, '--fit', 'E0/L', '--power', '2']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/27 done, 0 failed, 0 pending of 27/);
    expect(r.stdout).toContain('transition indicators along levels.tunnelling');
    expect(r.stdout).toMatch(/fidelity susceptibility per site\s+L/);
    expect(r.stdout).toContain('finite-size fits of observables');
    const bad = runCli(['summary', run, '--fit', 'colour']);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/--fit colour: not an observable/);
  });
});
