// Progress of a sector-by-sector solve names the sector being solved, so a residual that starts
// afresh in the next sector does not read as divergence. The sectors it names are checked against
// the solve's own account of every sector it ran (solver.sector_runs): same count, same dimensions.
import { describe, expect, it } from 'vitest';
import { solvePoint } from '../../src/point/solvePoint.js';
import type { SectorProgress } from '../../src/symmetry/sectorSolve.js';
import { validateSpec } from '../../src/spec/spec.js';

describe('progress of a sector-by-sector solve', () => {
  it('names each sector with its place among all of them and its dimension', () => {
    const spec = validateSpec({
      chain: { sites: 6, boundary: 'periodic' },
      levels: { count: 3, tunnelling: 1 },
      exchange: { strength: 1.5 },
      solve: { states: 2 },
    });
    const seen: SectorProgress[] = [];
    const { record } = solvePoint(spec, {
      groundStates: false,
      onProgress: (info) => info.sector && seen.push(info.sector),
    });
    const runs = record.solver.sector_runs!;
    expect(runs.length).toBeGreaterThan(1);
    expect(seen.length).toBeGreaterThan(0);
    const key = (l: SectorProgress['label']) => JSON.stringify([l.momentum, l.parity, l.level_flip, l.charge]);
    const dims = new Map(runs.map((r) => [key(r.label), r.dimension]));
    let lastShare = 0;
    for (const s of seen) {
      expect(s.count).toBe(runs.length);
      expect(s.index).toBeGreaterThanOrEqual(1);
      expect(s.index).toBeLessThanOrEqual(runs.length);
      expect(s.dimension).toBe(dims.get(key(s.label)));
      expect(s.spaceBefore).toBeGreaterThanOrEqual(lastShare);
      expect(s.spaceBefore).toBeLessThan(1);
      lastShare = s.spaceBefore;
    }
    // More than one sector reported: the line moves on as the solve does.
    expect(new Set(seen.map((s) => key(s.label))).size).toBeGreaterThan(1);
  });
});
