import { describe, expect, it } from 'vitest';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import {
  findPeak,
  fidelitySusceptibility,
  negativeCurvature,
  slope,
  transitionIndicators,
} from '../../src/analysis/indicators.js';
import { finiteSizeFit } from '../../src/analysis/fits.js';
import { isingFidelity, isingGroundEnergy, isingOddSectorEnergy, isingSpec } from '../support/ising.js';

function overlap(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return Math.abs(s);
}

describe('transverse-field Ising ring through docs/model.md against the free-fermion solution (Pfeuty 1970)', () => {
  it.each([
    [6, 0.3],
    [6, 1.0],
    [8, 0.7],
    [8, 1.6],
    [10, 1.0],
    [12, 0.9],
    [12, 2.5],
  ])('L = %i, g = %f: ground energy from the even sector, first excited from the odd one', (L, g) => {
    const { record } = solvePoint(validateSpec(isingSpec(L, g)));
    expect(record.energies[0]).toBeCloseTo(isingGroundEnergy(L, g), 9);
    expect(record.energies[1]).toBeCloseTo(isingOddSectorEnergy(L, g), 9);
  });

  it('overlaps of neighbouring ground states give the exact fidelity susceptibility', () => {
    const L = 10;
    const grid = [0.8, 0.85, 0.9, 0.95, 1.0, 1.05, 1.1];
    const states = grid.map((g) => solvePoint(validateSpec(isingSpec(L, g))).groundStates[0]);
    const pairs = grid.slice(1).map((g, k) => ({ from: grid[k], to: g, overlap: overlap(states[k], states[k + 1]) }));
    const chi = fidelitySusceptibility(pairs, L);
    // Expected: chi = -2 ln F / (dg^2 L) (the usual finite-difference definition of the fidelity
    // susceptibility per site, from memory) with F from the Pfeuty free-fermion solution.
    chi.x.forEach((x, k) => {
      const delta = pairs[k].to - pairs[k].from;
      const exact = (-2 * Math.log(isingFidelity(L, pairs[k].from, pairs[k].to))) / (delta * delta * L);
      expect(x).toBeCloseTo((pairs[k].from + pairs[k].to) / 2, 14);
      expect(chi.y[k]).toBeCloseTo(exact, 6);
    });
  });

  it('the fidelity-susceptibility peak approaches the critical field g = 1 as L grows', () => {
    // Grid of spacing 0.02 around the transition; one line per chain length, as a scan would give.
    const grid = Array.from({ length: 12 }, (_, k) => 0.8 + 0.02 * k);
    const sizes = [6, 8, 10, 12, 14];
    const peaks = sizes.map((L) => {
      const solved = grid.map((g) =>
        solvePoint(validateSpec(isingSpec(L, g, { states: 1, tolerance: 1e-9, entanglement: 'none' }))),
      );
      const indicators = transitionIndicators({
        x: grid,
        sites: L,
        groundEnergy: solved.map((s) => s.record.energies[0]),
        overlapPrevious: solved.map((s, k) =>
          k === 0 ? null : overlap(solved[k - 1].groundStates[0], s.groundStates[0]),
        ),
        degeneracy: solved.map((s) => s.record.solver.degeneracy),
      });
      const fidelity = indicators.find((i) => i.name === 'fidelity');
      expect(fidelity?.peak?.at_edge).toBe(false);
      // The same peak search on the exact curve (Pfeuty-solution fidelity on the same pairs).
      const exact = fidelitySusceptibility(
        grid.slice(1).map((g, k) => ({ from: grid[k], to: g, overlap: isingFidelity(L, grid[k], g) })),
        L,
      );
      expect(fidelity!.peak!.position).toBeCloseTo(findPeak(exact.x, exact.y, 'max')!.position, 5);
      return fidelity!.peak!;
    });
    const distance = peaks.map((p) => Math.abs(1 - p.position));
    for (let k = 1; k < distance.length; k++) expect(distance[k]).toBeLessThan(distance[k - 1]);
    // Below the transition and closing in: the exact finite-ring peaks (free fermions, computed
    // by maximizing the Pfeuty-solution fidelity) are at 0.855, 0.916, 0.945, 0.961, 0.971.
    peaks.forEach((p) => expect(p.position).toBeLessThan(1));
    expect(distance[distance.length - 1]).toBeLessThan(0.04);
    // 1 - g_peak falls like 1/L^2 on these rings; the extrapolation lands on g = 1.
    const fit = finiteSizeFit(
      sizes.slice(1),
      peaks.slice(1).map((p) => p.position),
      { power: 2 },
    );
    expect(Math.abs(fit.extrapolated - 1)).toBeLessThan(0.01);
    expect(fit.extrapolated_error).not.toBeNull();
  });

  it('the gap closes and -d2E0/dg2 per site peaks near g = 1', () => {
    const L = 10;
    const grid = Array.from({ length: 11 }, (_, k) => 0.7 + 0.06 * k);
    const energies = grid.map((g) => isingGroundEnergy(L, g));
    const solved = grid.map(
      (g) => solvePoint(validateSpec(isingSpec(L, g, { tolerance: 1e-9, entanglement: 'none' }))).record,
    );
    solved.forEach((r, k) => expect(r.energies[0]).toBeCloseTo(energies[k], 9));
    const indicators = transitionIndicators({
      x: grid,
      sites: L,
      groundEnergy: solved.map((r) => r.energies[0]),
      gap: solved.map((r) => r.gap),
    });
    const curvature = indicators.find((i) => i.name === 'curvature')!;
    // Same curve from the exact energies (Pfeuty 1970) through the same differences.
    const exact = negativeCurvature(grid, energies, L);
    curvature.y.forEach((y, k) => expect(y).toBeCloseTo(exact.y[k], 5));
    expect(Math.abs(curvature.peak!.position - 1)).toBeLessThan(0.1);
    // The gap of the ring is 2|1-g| + O(1/L) in the paramagnet; it is smallest on the ordered side.
    const gap = indicators.find((i) => i.name === 'gap')!;
    expect(gap.peak!.position).toBeLessThan(1);
  });
});

describe('peaks and finite differences (textbook formulas)', () => {
  it('the parabola vertex recovers the peak of a quadratic on an uneven grid exactly', () => {
    // y = 3 - 2 (x - 0.37)^2: vertex at 0.37, value 3.
    const x = [0, 0.1, 0.25, 0.33, 0.5, 0.8, 1];
    const y = x.map((t) => 3 - 2 * (t - 0.37) ** 2);
    const peak = findPeak(x, y, 'max')!;
    expect(peak.position).toBeCloseTo(0.37, 12);
    expect(peak.value).toBeCloseTo(3, 12);
    expect(peak.uncertainty).toBeCloseTo((0.5 - 0.25) / 4, 14);
    expect(peak.at_edge).toBe(false);
    const minimum = findPeak(
      x,
      y.map((v) => -v),
      'min',
    )!;
    expect(minimum.position).toBeCloseTo(0.37, 12);
  });

  it('flags a peak at the end of the scan', () => {
    const peak = findPeak([1, 2, 3], [1, 2, 3], 'max')!;
    expect(peak).toEqual({ position: 3, value: 3, uncertainty: 1, at_edge: true, refined: false });
  });

  it('a gap closing at a level crossing is never reported negative: the grid point, marked unrefined', () => {
    // A crossing at x = 2 with different slopes on each side: the gap is |E1 - E0| >= 0 (E1 >= E0
    // by ordering), a kink, not a parabola. The parabola through (1, 0.3), (2, 0), (3, 0.05) has its
    // vertex at 2 + 0.125 / 0.35 with value -0.125^2 / 0.7 < 0 (elementary algebra).
    const line = { x: [0, 1, 2, 3, 4], sites: 2, groundEnergy: [0, 0, 0, 0, 0], gap: [0.6, 0.3, 0, 0.05, 0.1] };
    const gap = transitionIndicators(line).find((i) => i.name === 'gap')!;
    expect(gap.peak).toEqual({ position: 2, value: 0, uncertainty: 0.5, at_edge: false, refined: false });
    // The same samples as a curve with no lower bound keep the parabola's vertex.
    const free = findPeak(line.x, line.gap, 'min')!;
    expect(free.refined).toBe(true);
    expect(free.position).toBeCloseTo(2 + 0.125 / 0.35, 12);
    expect(free.value).toBeCloseTo(-(0.125 ** 2) / 0.7, 12);
    // A smooth avoided crossing keeps its refined minimum.
    const smooth = findPeak([0, 1, 2, 3], [1.2, 0.35, 0.3, 0.85], 'min', { lowerBound: 0 })!;
    expect(smooth.refined).toBe(true);
    expect(smooth.value).toBeGreaterThan(0);
  });

  it('second differences are exact for a quadratic and slopes for a line, also on uneven grids', () => {
    // Expected values by elementary calculus: -(5t^2 - t)''/2 = -5 and (4 - 2.5t)' = -2.5 (textbook).
    const x = [0, 0.3, 0.4, 1.1, 1.5];
    const curvature = negativeCurvature(
      x,
      x.map((t) => 5 * t * t - t),
      2,
    );
    curvature.y.forEach((v) => expect(v).toBeCloseTo(-10 / 2, 12));
    const s = slope(
      x,
      x.map((t) => 4 - 2.5 * t),
    );
    s.y.forEach((v) => expect(v).toBeCloseTo(-2.5, 12));
    expect(s.x).toEqual([0.15, 0.35, 0.75, 1.3].map((v) => expect.closeTo(v, 14)));
  });

  it('skips fidelity where the ground-state degeneracy changes and reads lines scanned backwards', () => {
    const x = [3, 2, 1, 0];
    // The line ran from 3 down to 0; overlapPrevious[k] pairs point k with point k-1.
    const line = {
      x,
      sites: 1,
      groundEnergy: [0, 0, 0, 0],
      overlapPrevious: [null, 0.9, 0.8, 0.7],
      degeneracy: [1, 1, 1, 1],
    };
    const fidelity = transitionIndicators(line).find((i) => i.name === 'fidelity')!;
    expect(fidelity.x).toEqual([0.5, 1.5, 2.5]);
    expect(fidelity.y).toEqual([0.7, 0.8, 0.9].map((F) => expect.closeTo(-2 * Math.log(F), 14)));
    const degenerate = transitionIndicators({ ...line, degeneracy: [1, 2, 1, 1] }).find((i) => i.name === 'fidelity')!;
    expect(degenerate.x).toEqual([0.5]);
    const twofold = transitionIndicators({ ...line, degeneracy: [2, 2, 1, 1] }).find((i) => i.name === 'fidelity')!;
    expect(twofold.x).toEqual([0.5, 2.5]);
  });
});
