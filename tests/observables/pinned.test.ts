import { Matrix, EigenvalueDecomposition } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { buildBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { pinnedObservables } from '../../src/observables/pinned.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { rng } from '../support/random.js';

describe('ground-state observables', () => {
  // Without couplings between sites the ground state is a product of one-molecule ground states,
  // so each site's populations are |phi0(n)|^2 of the single-molecule Hamiltonian (diagonalized here
  // with ml-matrix), and for independent identically distributed levels the expected
  // (1/L) sum (n_i - nbar)^2 is (L-1)/L times the variance (elementary statistics).
  it('independent molecules: populations, spread, string width and pair separation', () => {
    const L = 5;
    const N = 4;
    const tunnelling = [1, 0.6, 0.8];
    const detuning = [0.3, -0.2, 0.1, 0.5];
    const r = solvePoint(
      validateSpec({ chain: { sites: L }, levels: { count: N, tunnelling, detuning }, solve: { states: 2 } }),
    ).record;

    const h = Matrix.zeros(N, N);
    detuning.forEach((d, n) => h.set(n, n, d));
    tunnelling.forEach((J, l) => {
      h.set(l, l + 1, -J);
      h.set(l + 1, l, -J);
    });
    const evd = new EigenvalueDecomposition(h, { assumeSymmetric: true });
    const order = evd.realEigenvalues.map((e, k) => [e, k]).sort((a, b) => a[0] - b[0]);
    const phi0 = evd.eigenvectorMatrix.getColumn(order[0][1]);
    const p = phi0.map((a) => a * a);
    const mean = p.reduce((acc, q, n) => acc + n * q, 0);
    const variance = p.reduce((acc, q, n) => acc + n * n * q, 0) - mean * mean;

    expect(r.energies[0]).toBeCloseTo(L * order[0][0], 11);
    for (let i = 0; i < L; i++) {
      for (let n = 0; n < N; n++) expect(r.observables.populations[i][n]).toBeCloseTo(p[n], 10);
      expect(r.observables.level_mean[i]).toBeCloseTo(mean, 10);
      expect(r.observables.spread[i]).toBeCloseTo(variance, 10);
      for (let j = 0; j < L; j++)
        expect(r.observables.pair_separation[i][j]).toBeCloseTo(i === j ? 0 : 2 * variance, 10);
    }
    expect(r.observables.string_width).toBeCloseTo(((L - 1) / L) * variance, 10);
  });

  // A ring of three levels with negative tunnelling has E_m = 2|J| cos(2 pi m / 3): a doubly
  // degenerate ground pair m = +-1 (textbook tight-binding). Averaged over that pair, every level
  // is equally populated whatever basis of the pair the solver returns.
  it('averages over a degenerate ground space and reports its size', () => {
    const r = solvePoint(
      validateSpec({
        chain: { sites: 1 },
        levels: { count: 3, boundary: 'ring', tunnelling: -1 },
        solve: { states: 3 },
      }),
    ).record;
    expect(r.solver.degeneracy).toBe(2);
    expect(r.energies[0]).toBeCloseTo(-1, 12);
    for (const q of r.observables.populations[0]) expect(q).toBeCloseTo(1 / 3, 12);
  });

  it('populations sum to one on every site and the string width is bounded by the spreads', () => {
    const r = solvePoint(
      validateSpec({
        chain: { sites: 6, boundary: 'periodic' },
        levels: { count: 4 },
        exchange: { strength: 3, weights: 'rotor' },
        solve: { states: 1 },
      }),
    ).record;
    for (const row of r.observables.populations) expect(row.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    // (1/L) sum (n_i - nbar)^2 <= (1/L) sum (n_i - c)^2 for any c, averaged: width <= mean of <(n_i - c)^2>
    const meanSpread = r.observables.spread.reduce((a, b) => a + b, 0) / r.observables.spread.length;
    const meanLevel = r.observables.level_mean.reduce((a, b) => a + b, 0) / r.observables.level_mean.length;
    const around =
      r.observables.spread.reduce((acc, s, i) => acc + s + (r.observables.level_mean[i] - meanLevel) ** 2, 0) / 6;
    expect(r.observables.string_width).toBeLessThanOrEqual(around + 1e-12);
    expect(meanSpread).toBeGreaterThan(0);
  });
});

describe('pinned observables against their definitions, state by state', () => {
  // docs/model.md's definitions summed literally over every configuration, with its digits read off the
  // index (site 0 the fastest digit), for random probabilities: the fast sweep splits the index
  // in halves and must give the same numbers (common practice; no outside source needed).
  it.each([
    [1, 3],
    [2, 4],
    [5, 3],
    [6, 2],
    [7, 3],
  ])('L = %i, N = %i', (L, N) => {
    const basis = buildBasis(buildModel(validateSpec({ chain: { sites: L }, levels: { count: N } })));
    if (basis.kind !== 'pinned') throw new Error('expected a pinned basis');
    const r = rng(100 * L + N);
    const p = Float64Array.from({ length: basis.dim }, () => r());
    const total = p.reduce((a, b) => a + b, 0);
    p.forEach((x, s) => (p[s] = x / total));
    const populations = Array.from({ length: L }, () => new Array<number>(N).fill(0));
    const pair = Array.from({ length: L }, () => new Array<number>(L).fill(0));
    let width = 0;
    for (let s = 0; s < basis.dim; s++) {
      const n = Array.from({ length: L }, (_, i) => Math.floor(s / N ** i) % N);
      const nbar = n.reduce((a, b) => a + b, 0) / L;
      width += (p[s] * n.reduce((a, x) => a + (x - nbar) ** 2, 0)) / L;
      n.forEach((x, i) => (populations[i][x] += p[s]));
      for (let i = 0; i < L; i++) for (let j = 0; j < L; j++) pair[i][j] += p[s] * (n[i] - n[j]) ** 2;
    }
    const o = pinnedObservables(basis, p);
    o.populations.forEach((row, i) => row.forEach((q, n) => expect(q).toBeCloseTo(populations[i][n], 13)));
    const mean = populations.map((row) => row.reduce((a, q, n) => a + n * q, 0));
    const variance = populations.map((row, i) => row.reduce((a, q, n) => a + n * n * q, 0) - mean[i] ** 2);
    o.level_mean.forEach((m, i) => expect(m).toBeCloseTo(mean[i], 13));
    o.spread.forEach((v, i) => expect(v).toBeCloseTo(variance[i], 13));
    expect(o.string_width).toBeCloseTo(width, 13);
    o.pair_separation.forEach((row, i) => row.forEach((d, j) => expect(d).toBeCloseTo(pair[i][j], 12)));
  });
});
