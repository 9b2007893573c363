import { describe, expect, it } from 'vitest';
import type { PointRecord } from '../../../src/point/solvePoint.js';
import { renderReport } from '../../../src/output/report/report.js';
import { analyseScan, type AnalysisInput } from '../../../src/analysis/transitions.js';

// A gap that nearly closes at an avoided crossing (a kink, |E1 - E0| >= 0 by ordering): the parabola
// through (1, 0.3), (2, 0.001), (3, 0.05) dips to 0.001 - 0.125^2 / 0.696 < 0 (elementary algebra), so
// the report marks the grid point and says so, and draws no negative gap. (A gap of exactly 0 would
// be a doubly degenerate ground level, whose gap above the ground level these two energies do not give.)
function record(gap: number): PointRecord {
  return {
    energies: [-1, -1 + gap],
    gap,
    observables: {
      populations: [
        [1, 0],
        [1, 0],
      ],
      level_mean: [0, 0],
      spread: [0, 0],
      string_width: 0,
      pair_separation: [
        [0, 0],
        [0, 0],
      ],
    },
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
  };
}

describe('the report marks a peak that is the grid point', () => {
  it('a closing gap: "(grid)" in the peak table and the marker label, never a negative value', () => {
    const x = [0, 1, 2, 3, 4];
    const gaps = [0.6, 0.3, 0.001, 0.05, 0.1];
    const input: AnalysisInput = {
      axes: [{ key: 'exchange.strength', values: x }],
      zip: false,
      points: x.map((v, k) => ({
        index: k,
        params: { 'exchange.strength': v },
        record: record(gaps[k]),
        overlapPrevious: null,
      })),
    };
    const analysis = analyseScan(input);
    const peak = analysis.lines[0].indicators.find((i) => i.name === 'gap')!.peak!;
    expect(peak).toMatchObject({ position: 2, refined: false });
    expect(peak.value).toBeCloseTo(0.001, 12);
    const html = renderReport({ ...input, title: 'crossing', about: [], analysis, energyUnitHz: null });
    expect(html).toContain('(grid)');
    expect(html).toContain('the grid point: no parabola fits there');
  });
});
