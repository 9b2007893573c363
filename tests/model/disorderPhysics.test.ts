// Disorder ensembles against outside results (issue 20).
//
// The SSH ladder: one molecule whose levels are joined by alternating tunnellings J1 < J2, weak links
// at both ends (Su, Schrieffer and Heeger, Phys. Rev. Lett. 42, 1698 (1979); Asbóth, Oroszlány and
// Pályi, A Short Course on Topological Insulators, Springer 2016, LNP vol. 919, ch. 1).
// Its two edge modes sit at +-eps with eps = J2 (1 - r^2) r^(N/2), r = J1/J2, for N levels: the
// hybridization of the two edge states, each of weight (1 - r^2) r^(2k) on the k-th level of its
// sublattice from its end (the normalized edge state of the semi-infinite chain, Asbóth et al. eq.
// 1.30 ff.; prefactor from memory, the exponential law is the book's). Chiral (sublattice) symmetry
// keeps the spectrum symmetric, E <-> -E, under any noise on the tunnellings alone; a detuning breaks
// it and shifts each edge mode at first order by its weighted detuning, so the pair near zero is the
// two-level problem [[E_L, eps], [eps, E_R]] (common practice: degenerate perturbation theory).
//
// Free molecules (V = 0) with one common tunnelling draw: E0 = L e0(J (1 + w g)), e0 the lowest
// eigenvalue of one ladder (ml-matrix's dense eigensolver), so the ensemble mean is L times the
// Gaussian average of e0, computed by Gauss-Hermite quadrature (nodes and weights by Golub and
// Welsch, Math. Comp. 23, 221 (1969), from the Jacobi matrix of the probabilists' Hermite
// polynomials, off-diagonal sqrt(k)), to within the sample's standard error.
import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { solvePoint } from '../../src/point/solvePoint.js';
import { buildModel } from '../../src/model/model.js';
import { validateSpec } from '../../src/spec/spec.js';

const N = 16;
const M = N / 2;
const sshTunnelling = (J1: number, J2: number): number[] =>
  Array.from({ length: N - 1 }, (_, l) => (l % 2 === 0 ? J1 : J2));

function ladder(J1: number, J2: number, disorder?: Record<string, unknown>, realization = 0) {
  const spec = validateSpec({
    chain: { sites: 1 },
    levels: { count: N, tunnelling: sshTunnelling(J1, J2) },
    solve: { states: N, tolerance: 1e-12 },
    ...(disorder ? { disorder: { realizations: 100, seed: 2016, ...disorder, realization } } : {}),
  });
  const energies = solvePoint(spec).record.energies;
  const nearZero = [...energies].sort((a, b) => Math.abs(a) - Math.abs(b)).slice(0, 2);
  return { energies, nearZero: nearZero.sort((a, b) => a - b), model: buildModel(spec) };
}

const eps = (J1: number, J2: number) => J2 * (1 - (J1 / J2) ** 2) * (J1 / J2) ** M;

describe('SSH ladder (Su, Schrieffer and Heeger 1979; Asbóth, Oroszlány and Pályi 2016)', () => {
  it('clean: the edge splitting decays as exp(-(N/2) ln(J2/J1)), 2 eps = 2 J2 (1 - r^2) r^(N/2)', () => {
    const J2 = 1;
    const xs: number[] = [];
    const logs: number[] = [];
    for (const J1 of [0.2, 0.3, 0.4]) {
      const { nearZero } = ladder(J1, J2);
      const splitting = nearZero[1] - nearZero[0];
      expect(Math.abs(splitting / (2 * eps(J1, J2)) - 1)).toBeLessThan(1e-4);
      xs.push(Math.log(J2 / J1));
      logs.push(Math.log(splitting / (2 * J2 * (1 - (J1 / J2) ** 2))));
    }
    // ln of the splitting (without the prefactor) against ln(J2/J1): a line of slope -N/2 through 0.
    const slope = (logs[2] - logs[0]) / (xs[2] - xs[0]);
    expect(Math.abs(slope + M)).toBeLessThan(1e-3);
    expect(Math.abs(logs[1] + M * xs[1])).toBeLessThan(1e-3);
  });

  it('tunnelling noise alone, 100 realizations: the spectrum stays chiral and the edge modes at zero to the clean splitting', () => {
    const [J1, J2] = [0.3, 1];
    const clean = eps(J1, J2);
    for (let r = 0; r < 100; r++) {
      const { energies, nearZero } = ladder(J1, J2, { tunnelling: { relative: 0.1, correlation: 'per_link' } }, r);
      // Chiral symmetry: E_k = -E_{N-1-k}.
      for (let k = 0; k < N; k++) expect(Math.abs(energies[k] + energies[N - 1 - k])).toBeLessThan(1e-12);
      expect(nearZero[0]).toBeCloseTo(-nearZero[1], 12);
      // Exponentially small as the clean one: a product of 15 link ratios, each within ~10%.
      expect(nearZero[1]).toBeLessThan(30 * clean);
      // The bulk stays away: the gap of the clean chain is 2 (J2 - J1).
      const magnitudes = energies.map(Math.abs).sort((a, b) => a - b);
      expect(magnitudes[2]).toBeGreaterThan(0.8 * (J2 - J1));
    }
  });

  it('detuning noise, 100 realizations: each edge mode shifts linearly by its weighted detuning', () => {
    const [J1, J2] = [0.3, 1];
    const rr = J1 / J2;
    const t = eps(J1, J2);
    const w = 1e-3;
    let largest = 0;
    for (let r = 0; r < 100; r++) {
      const { nearZero, model } = ladder(J1, J2, { detuning: { absolute: w } }, r);
      const delta = model.disorder!.detuning![0];
      let left = 0;
      let right = 0;
      for (let k = 0; k < M; k++) {
        const weight = (1 - rr * rr) * rr ** (2 * k);
        left += weight * delta[2 * k];
        right += weight * delta[N - 1 - 2 * k];
      }
      const mid = (left + right) / 2;
      const half = Math.sqrt(((left - right) / 2) ** 2 + t * t);
      // First order in w; the second order is ~ w^2 / (J2 - J1).
      expect(Math.abs(nearZero[0] - (mid - half))).toBeLessThan(5 * w * w);
      expect(Math.abs(nearZero[1] - (mid + half))).toBeLessThan(5 * w * w);
      largest = Math.max(largest, Math.abs(nearZero[0]), Math.abs(nearZero[1]));
    }
    // The shifts are of the order of w, far beyond the clean splitting.
    expect(largest).toBeGreaterThan(10 * t);
  });
});

/** Gauss-Hermite nodes and weights for the standard normal (Golub-Welsch). */
function gaussHermite(n: number): { nodes: number[]; weights: number[] } {
  const J = Matrix.zeros(n, n);
  for (let k = 1; k < n; k++) {
    J.set(k - 1, k, Math.sqrt(k));
    J.set(k, k - 1, Math.sqrt(k));
  }
  const evd = new EigenvalueDecomposition(J, { assumeSymmetric: true });
  const V = evd.eigenvectorMatrix;
  const nodes = evd.realEigenvalues;
  const weights = nodes.map((_, k) => {
    const col = V.getColumn(k);
    const norm = col.reduce((s, x) => s + x * x, 0);
    return (col[0] * col[0]) / norm;
  });
  return { nodes, weights };
}

function ladderGround(tunnelling: number[], detuning: number[]): number {
  const n = detuning.length;
  const h = Matrix.zeros(n, n);
  detuning.forEach((d, k) => h.set(k, k, d));
  tunnelling.forEach((J, l) => {
    h.set(l + 1, l, -J);
    h.set(l, l + 1, -J);
  });
  return Math.min(...new EigenvalueDecomposition(h, { assumeSymmetric: true }).realEigenvalues);
}

describe('free molecules with a common tunnelling draw', () => {
  it('the ensemble mean of E0 is L times the Gaussian average of one ladder ground energy, within the standard error', () => {
    const L = 2;
    const J = [1, 0.7];
    const detuning = [0, 0.4, -0.3];
    const w = 0.2;
    const R = 200;
    const e0: number[] = [];
    for (let r = 0; r < R; r++) {
      const spec = validateSpec({
        chain: { sites: L },
        levels: { count: 3, tunnelling: J, detuning },
        solve: { states: 1 },
        disorder: {
          realizations: R,
          seed: 5,
          realization: r,
          tunnelling: { relative: w, correlation: 'common' },
        },
      });
      e0.push(solvePoint(spec).record.energies[0]);
    }
    const mean = e0.reduce((a, b) => a + b, 0) / R;
    const std = Math.sqrt(e0.reduce((a, b) => a + (b - mean) ** 2, 0) / (R - 1));
    const stderr = std / Math.sqrt(R);
    const { nodes, weights } = gaussHermite(40);
    expect(weights.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    const exact =
      L *
      nodes.reduce(
        (s, g, k) =>
          s +
          weights[k] *
            ladderGround(
              J.map((x) => x * (1 + w * g)),
              detuning,
            ),
        0,
      );
    expect(stderr).toBeGreaterThan(0);
    expect(Math.abs(mean - exact)).toBeLessThan(4 * stderr);
  });
});
