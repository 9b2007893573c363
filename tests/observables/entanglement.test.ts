import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, SingularValueDecomposition } from 'ml-matrix';
import {
  entropiesFromWeights,
  pinnedEntanglement,
  reducedDensityMatrix,
  cutsFor,
} from '../../src/observables/entanglement.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';

/**
 * Free-fermion reference (Peschel, J. Phys. A 36, L205 (2003)): for a Slater determinant the
 * reduced density matrix of a block is fixed by the block's correlation matrix C_ij = <c+_i c_j>.
 * With its eigenvalues zeta, S = -sum [zeta ln zeta + (1-zeta) ln(1-zeta)],
 * S_2 = -sum ln(zeta^2 + (1-zeta)^2), and the Schmidt weights are the products over modes of
 * zeta or 1-zeta.
 */
function peschelBlock(hopping: number, sites: number, block: number) {
  // Single-particle Hamiltonian of the open chain, h_ij = hopping for |i-j| = 1.
  const h = Matrix.zeros(sites, sites);
  for (let i = 0; i + 1 < sites; i++) {
    h.set(i, i + 1, hopping);
    h.set(i + 1, i, hopping);
  }
  const evd = new EigenvalueDecomposition(h, { assumeSymmetric: true });
  const energies = evd.realEigenvalues;
  const modes = evd.eigenvectorMatrix;
  const C = Matrix.zeros(block, block);
  for (let k = 0; k < sites; k++) {
    if (energies[k] >= 0) continue; // ground state: every negative-energy orbital filled
    for (let i = 0; i < block; i++)
      for (let j = 0; j < block; j++) C.set(i, j, C.get(i, j) + modes.get(i, k) * modes.get(j, k));
  }
  const zeta = new EigenvalueDecomposition(C, { assumeSymmetric: true }).realEigenvalues.map((z) =>
    Math.min(Math.max(z, 0), 1),
  );
  let vonNeumann = 0;
  let renyi2 = 0;
  for (const z of zeta) {
    for (const p of [z, 1 - z]) if (p > 0) vonNeumann -= p * Math.log(p);
    renyi2 -= Math.log(z * z + (1 - z) * (1 - z));
  }
  let weights = [1];
  for (const z of zeta) weights = weights.flatMap((w) => [w * z, w * (1 - z)]);
  const spectrum = weights
    .filter((w) => w > 1e-12)
    .sort((a, b) => b - a)
    .map((w) => -Math.log(w));
  return { vonNeumann, renyi2, spectrum };
}

describe('XX chain half-chain entanglement against the free-fermion correlation-matrix method', () => {
  // docs/model.md with N = 2 and exchange only is V sum (s+_i s-_{i+1} + h.c.): by Jordan-Wigner on an
  // open chain, free fermions hopping with amplitude V (textbook). Even L: a unique ground state at
  // half filling, so the full-space ground state is the Slater determinant.
  it.each([
    [8, 4],
    [10, 5],
    [10, 3],
    [12, 6],
  ])('L = %i, block of %i sites', (L, block) => {
    const V = 1.3;
    const spec = validateSpec({
      chain: { sites: L },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: V },
      solve: { states: 2, entanglement: [block], tolerance: 1e-11 },
    });
    const { record } = solvePoint(spec);
    expect(record.solver.degeneracy).toBe(1);
    const [cut] = record.observables.entanglement as ReturnType<typeof pinnedEntanglement>;
    const expected = peschelBlock(V, L, block);
    expect(cut.cut).toBe(block);
    expect(cut.von_neumann).toBeCloseTo(expected.vonNeumann, 8);
    expect(cut.renyi_2).toBeCloseTo(expected.renyi2, 8);
    // Entanglement energies: compare those with weight well above the eigensolver's tolerance.
    const reliable = expected.spectrum.filter((e) => e < 12).slice(0, cut.spectrum.length);
    reliable.forEach((e, k) => expect(cut.spectrum[k]).toBeCloseTo(e, 5));
  });
});

/** Schmidt weights from ml-matrix's SVD of the state as an (N^cut) x (N^(L-cut)) matrix (general-purpose library). */
function svdWeights(psi: Float64Array, L: number, N: number, cut: number, isComplex: boolean): number[] {
  const dL = N ** cut;
  const dR = N ** (L - cut);
  const amp = (a: number, b: number, part: 0 | 1) =>
    isComplex ? psi[2 * (a + dL * b) + part] : part === 0 ? psi[a + dL * b] : 0;
  // A complex matrix M = X + iY has the singular values of [[X, -Y], [Y, X]], each twice (common practice).
  const size = isComplex ? 2 : 1;
  const M = Matrix.zeros(size * dL, size * dR);
  for (let a = 0; a < dL; a++)
    for (let b = 0; b < dR; b++) {
      M.set(a, b, amp(a, b, 0));
      if (isComplex) {
        M.set(a + dL, b + dR, amp(a, b, 0));
        M.set(a, b + dR, -amp(a, b, 1));
        M.set(a + dL, b, amp(a, b, 1));
      }
    }
  const singular = new SingularValueDecomposition(M, {
    computeLeftSingularVectors: false,
    computeRightSingularVectors: false,
  }).diagonal;
  const weights = singular.map((s) => s * s).sort((x, y) => y - x);
  return isComplex ? weights.filter((_, k) => k % 2 === 0) : weights;
}

describe('general states against a singular value decomposition', () => {
  it.each([
    [11, 5, 3],
    [12, 4, 3],
    [13, 6, 2],
    [14, 3, 4],
  ])('random complex spec (seed %i, L = %i, N = %i): every cut', (seed, L, N) => {
    const raw = clean(randomPinnedSpec(seed, L, N));
    raw.solve = { states: 1, entanglement: 'all' };
    const spec = validateSpec(raw);
    const solved = solvePoint(spec);
    const isComplex = solved.groundStates[0].length === 2 * N ** L;
    expect(isComplex).toBe(true); // random Peierls phases
    const cuts = solved.record.observables.entanglement as ReturnType<typeof pinnedEntanglement>;
    expect(cuts.map((c) => c.cut)).toEqual(Array.from({ length: L - 1 }, (_, k) => k + 1));
    for (const c of cuts) {
      const expected = entropiesFromWeights(svdWeights(solved.groundStates[0], L, N, c.cut, isComplex));
      expect(c.von_neumann).toBeCloseTo(expected.von_neumann, 10);
      expect(c.renyi_2).toBeCloseTo(expected.renyi_2, 10);
      expected.spectrum.filter((e) => e < 20).forEach((e, k) => expect(c.spectrum[k]).toBeCloseTo(e, 6));
    }
  });

  it('a reduced density matrix is Hermitian with unit trace', () => {
    const raw = clean(randomPinnedSpec(21, 5, 3));
    const solved = solvePoint(validateSpec(raw));
    const isComplex = solved.groundStates[0].length === 2 * 3 ** 5;
    for (const cut of [1, 2, 3, 4]) {
      const rho = reducedDensityMatrix(solved.groundStates, 5, 3, isComplex, cut);
      let trace = 0;
      for (let r = 0; r < rho.dim; r++) {
        trace += rho.re[r * rho.dim + r];
        for (let c = 0; c < rho.dim; c++) {
          expect(rho.re[r * rho.dim + c]).toBeCloseTo(rho.re[c * rho.dim + r], 14);
          if (rho.im) expect(rho.im[r * rho.dim + c]).toBeCloseTo(-rho.im[c * rho.dim + r], 14);
        }
      }
      expect(trace).toBeCloseTo(1, 12);
    }
  });
});

describe('textbook states', () => {
  const state = (entries: [number, number][], dim: number) => {
    const v = new Float64Array(dim);
    for (const [index, amplitude] of entries) v[index] = amplitude;
    return v;
  };

  it('a product state has no entanglement; a Bell pair has ln 2; so does the even mixture of |00> and |11>', () => {
    // Two sites, two levels; index = n_0 + 2 n_1.
    const product = state(
      [
        [0, 0.6],
        [1, 0.8],
      ],
      4,
    ); // (0.6|0> + 0.8|1>) x |0>
    const bell = state(
      [
        [0, Math.SQRT1_2],
        [3, Math.SQRT1_2],
      ],
      4,
    );
    const [p] = pinnedEntanglement([product], 2, 2, false, [1]);
    const [b] = pinnedEntanglement([bell], 2, 2, false, [1]);
    const [m] = pinnedEntanglement([state([[0, 1]], 4), state([[3, 1]], 4)], 2, 2, false, [1]);
    expect(p.von_neumann).toBeCloseTo(0, 14);
    expect(p.spectrum).toEqual([expect.closeTo(0, 14)]);
    expect(b.von_neumann).toBeCloseTo(Math.LN2, 14);
    expect(b.renyi_2).toBeCloseTo(Math.LN2, 14);
    expect(b.spectrum).toEqual([expect.closeTo(Math.LN2, 14), expect.closeTo(Math.LN2, 14)]);
    expect(m.von_neumann).toBeCloseTo(Math.LN2, 14);
  });

  it('a maximally entangled pair of qutrits with complex phases has ln 3', () => {
    // (|00> + e^{i a}|11> + e^{i b}|22>)/sqrt 3: Schmidt weights 1/3 each (textbook).
    const psi = new Float64Array(18);
    const put = (index: number, phase: number) => {
      psi[2 * index] = Math.cos(phase) / Math.sqrt(3);
      psi[2 * index + 1] = Math.sin(phase) / Math.sqrt(3);
    };
    put(0, 0);
    put(4, 1.1);
    put(8, -2.3);
    const [e] = pinnedEntanglement([psi], 2, 3, true, [1]);
    expect(e.von_neumann).toBeCloseTo(Math.log(3), 13);
    expect(e.renyi_2).toBeCloseTo(Math.log(3), 13);
  });

  it('chooses cuts: auto only when the half chain is small', () => {
    expect(cutsFor('auto', 8, 2)).toEqual([4]);
    expect(cutsFor('auto', 10, 4)).toEqual([]); // 4^5 = 1024 states on the smaller side
    expect(cutsFor('half', 7, 3)).toEqual([3]);
    expect(cutsFor('all', 4, 3)).toEqual([1, 2, 3]);
    expect(cutsFor([3, 1, 3], 6, 3)).toEqual([1, 3]);
    expect(cutsFor('none', 6, 3)).toEqual([]);
  });
});

/**
 * The left block's reduced density matrix of the even mixture of `states`, by the definition
 * rho[a, a'] = (1/g) sum_k sum_b psi_k(a, b) conj(psi_k(a', b)) with index a + dL b, and its
 * eigenvalues from ml-matrix (a complex Hermitian R + iI through the real symmetric [[R, -I], [I, R]],
 * each eigenvalue twice; common practice).
 */
function denseLeftWeights(states: Float64Array[], L: number, N: number, cut: number, isComplex: boolean): number[] {
  const dL = N ** cut;
  const dR = N ** (L - cut);
  const R = Matrix.zeros(dL, dL);
  const I = Matrix.zeros(dL, dL);
  for (const psi of states) {
    const amp = (i: number): [number, number] => (isComplex ? [psi[2 * i], psi[2 * i + 1]] : [psi[i], 0]);
    for (let a = 0; a < dL; a++)
      for (let a2 = 0; a2 < dL; a2++)
        for (let b = 0; b < dR; b++) {
          const [xr, xi] = amp(a + dL * b);
          const [yr, yi] = amp(a2 + dL * b);
          R.set(a, a2, R.get(a, a2) + (xr * yr + xi * yi) / states.length);
          I.set(a, a2, I.get(a, a2) + (xi * yr - xr * yi) / states.length);
        }
  }
  const big = Matrix.zeros(2 * dL, 2 * dL);
  for (let a = 0; a < dL; a++)
    for (let a2 = 0; a2 < dL; a2++) {
      big.set(a, a2, R.get(a, a2));
      big.set(a + dL, a2 + dL, R.get(a, a2));
      big.set(a, a2 + dL, -I.get(a, a2));
      big.set(a + dL, a2, I.get(a, a2));
    }
  const doubled = new EigenvalueDecomposition(big, { assumeSymmetric: true }).realEigenvalues.sort((x, y) => y - x);
  return doubled.filter((_, k) => k % 2 === 0);
}

function randomStates(seed: number, count: number, dim: number, isComplex: boolean): Float64Array[] {
  const r = rng(seed);
  return Array.from({ length: count }, () => {
    const psi = Float64Array.from({ length: (isComplex ? 2 : 1) * dim }, () => r() - 0.5);
    const norm = Math.hypot(...psi);
    return psi.map((x) => x / norm);
  });
}

describe('a degenerate ground space (an even mixture): the entropy of the sites left of every cut', () => {
  // Random mixtures of g states against the dense partial trace: cuts where the left side is the
  // smaller, where the right side is smaller but the right side times g is not, and where the right
  // side's Gram matrix with the copy index is the cheaper one.
  it.each([
    [1, 3, 2, 2, false],
    [2, 3, 2, 2, true],
    [3, 4, 2, 3, false],
    [4, 4, 2, 3, true],
    [5, 4, 3, 2, false],
    [6, 4, 3, 2, true],
    [7, 5, 2, 4, true],
    [8, 5, 2, 1, true],
  ])('seed %i: L = %i, N = %i, g = %i, complex %s', (seed, L, N, g, isComplex) => {
    const states = randomStates(seed, g, N ** L, isComplex);
    const sides = new Set<string>();
    for (let cut = 1; cut < L; cut++) {
      sides.add(reducedDensityMatrix(states, L, N, isComplex, cut).side);
      const [got] = pinnedEntanglement(states, L, N, isComplex, [cut], 64);
      const expected = entropiesFromWeights(denseLeftWeights(states, L, N, cut, isComplex), 64);
      expect(got.von_neumann).toBeCloseTo(expected.von_neumann, 12);
      expect(got.renyi_2).toBeCloseTo(expected.renyi_2, 12);
      expect(got.spectrum.length).toBe(expected.spectrum.length);
      expected.spectrum.forEach((e, k) => expect(got.spectrum[k]).toBeCloseTo(e, 9));
    }
    if (g > 1 && L > 3) expect(sides).toEqual(new Set(['left', 'right']));
  });

  it.each([
    [
      'real, four-fold (periodic XX ring of 5)',
      { chain: { sites: 5, boundary: 'periodic' }, levels: { count: 2, tunnelling: 0 }, exchange: { strength: 1 } },
    ],
    [
      'complex, two-fold (Peierls phases, 5 x 3 ring)',
      {
        chain: { sites: 5, boundary: 'periodic' },
        levels: { count: 3, tunnelling: [0.7, 0.4], phase: [0.9, 0.2], detuning: [0, 0.3, -0.2] },
        exchange: { strength: 2.3 },
      },
    ],
  ])('solved degenerate ground spaces, %s: every cut against the dense partial trace', (_name, raw) => {
    const solved = solvePoint(validateSpec({ ...raw, solve: { states: 6, entanglement: 'all' } }));
    const g = solved.record.solver.degeneracy;
    expect(g).toBeGreaterThan(1);
    const L = raw.chain.sites;
    const N = raw.levels.count;
    const isComplex = solved.groundStates[0].length === 2 * N ** L;
    const cuts = solved.record.observables.entanglement as ReturnType<typeof pinnedEntanglement>;
    expect(cuts.map((c) => c.cut)).toEqual([1, 2, 3, 4]);
    for (const c of cuts) {
      const expected = entropiesFromWeights(denseLeftWeights(solved.groundStates, L, N, c.cut, isComplex));
      expect(c.von_neumann).toBeCloseTo(expected.von_neumann, 10);
      expect(c.renyi_2).toBeCloseTo(expected.renyi_2, 10);
    }
  });

  it('three-site XX chain, two-fold ground level -sqrt 2: cut 2 has the weights 1/8, 1/8, 3/8 +- sqrt(2)/4', () => {
    // Worked by hand: the one- and two-excitation ground states (|100> - sqrt2 |010> + |001>)/2 and
    // its particle-hole partner, averaged and traced over site 2.
    const spec = validateSpec({
      chain: { sites: 3 },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: 1 },
      solve: { entanglement: 'all' },
    });
    const { record } = solvePoint(spec);
    expect(record.solver.degeneracy).toBe(2);
    const [cut1, cut2] = record.observables.entanglement as ReturnType<typeof pinnedEntanglement>;
    // Cut 1: site 0 alone is in either level with probability 1/2.
    expect(cut1.von_neumann).toBeCloseTo(Math.LN2, 12);
    const weights = [3 / 8 + Math.SQRT2 / 4, 1 / 8, 1 / 8, 3 / 8 - Math.SQRT2 / 4];
    const expected = entropiesFromWeights(weights);
    expect(cut2.cut).toBe(2);
    expect(cut2.von_neumann).toBeCloseTo(0.832991, 6);
    expect(cut2.von_neumann).toBeCloseTo(expected.von_neumann, 12);
    expect(cut2.renyi_2).toBeCloseTo(0.575364, 6);
    expect(cut2.renyi_2).toBeCloseTo(expected.renyi_2, 12);
    expect(cut2.spectrum.length).toBe(4);
    expected.spectrum.forEach((e, k) => expect(cut2.spectrum[k]).toBeCloseTo(e, 10));
  });
});
