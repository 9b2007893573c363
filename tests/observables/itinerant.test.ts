import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec, type Spec } from '../../src/spec/spec.js';
import {
  applyLadders,
  denseFockHamiltonian,
  denseGround,
  expectation,
  key,
  randomItinerantSpec,
  type FockReference,
} from '../support/fockReference.js';
import { realEmbedding } from '../support/reference.js';

type Kind = 'hardcore' | 'boson' | 'fermion';

interface Reference {
  populations: number[][];
  density: number[];
  doubleOccupancy: number[];
  levelMean: number[];
  spread: number[];
  pairSeparation: number[][];
  width: number;
  rhoRe: number[][];
  rhoIm: number[][];
}

/**
 * The observables of a reference ground state, straight from their definitions (the header of
 * src/observables/itinerant.ts): diagonal ones configuration by configuration, the one-body density
 * matrix as sum_n <psi| a+_{i,n} a_{j,n} |psi> with the reference's own ladder operators.
 * psi is complex (re, im); pass im all zero for a real state.
 */
function referenceObservables(spec: Spec, ref: FockReference, re: number[], im: number[]): Reference {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  const Np = spec.particles.number;
  const pop = Array.from({ length: L }, () => new Array<number>(N).fill(0));
  const dens = new Array<number>(L).fill(0);
  const dbl = new Array<number>(L).fill(0);
  const m1 = new Array<number>(L).fill(0);
  const m2 = new Array<number>(L).fill(0);
  const num = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  const den = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  let width = 0;
  ref.states.forEach((occ, s) => {
    const p = re[s] * re[s] + im[s] * im[s];
    const levelsPresent: number[] = [];
    for (let i = 0; i < L; i++) {
      let Ni = 0;
      for (let n = 0; n < N; n++) {
        const o = occ[i * N + n];
        pop[i][n] += p * o;
        m1[i] += p * n * o;
        m2[i] += p * n * n * o;
        Ni += o;
        for (let c = 0; c < o; c++) levelsPresent.push(n);
      }
      dens[i] += p * Ni;
      dbl[i] += (p * Ni * (Ni - 1)) / 2;
    }
    // pairs of particles, one at i and one at j
    for (let i = 0; i < L; i++)
      for (let j = 0; j < L; j++) {
        if (i === j) continue;
        for (let a = 0; a < N; a++)
          for (let b = 0; b < N; b++) {
            const w = occ[i * N + a] * occ[j * N + b];
            num[i][j] += p * w * (a - b) ** 2;
            den[i][j] += p * w;
          }
      }
    const mean = levelsPresent.reduce((x, y) => x + y, 0) / Np;
    width += (p * levelsPresent.reduce((x, n) => x + (n - mean) ** 2, 0)) / Np;
  });
  const rhoRe = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  const rhoIm = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  for (let i = 0; i < L; i++)
    for (let j = 0; j < L; j++)
      for (let n = 0; n < N; n++) {
        ref.states.forEach((occ, s) => {
          const r = applyLadders(
            spec,
            [
              { mode: i * N + n, dagger: true },
              { mode: j * N + n, dagger: false },
            ],
            occ,
          );
          if (!r) return;
          const t = ref.indexOf.get(key(r.occ))!;
          // conj(psi_t) amp psi_s
          rhoRe[i][j] += r.amp * (re[t] * re[s] + im[t] * im[s]);
          rhoIm[i][j] += r.amp * (re[t] * im[s] - im[t] * re[s]);
        });
      }
  return {
    populations: pop,
    density: dens,
    doubleOccupancy: dbl,
    levelMean: m1.map((x, i) => (dens[i] < 1e-12 ? 0 : x / dens[i])),
    spread: m2.map((x, i) => (dens[i] < 1e-12 ? 0 : x / dens[i] - (m1[i] / dens[i]) ** 2)),
    pairSeparation: num.map((row, i) => row.map((x, j) => (i === j || den[i][j] < 1e-12 ? 0 : x / den[i][j]))),
    width,
    rhoRe,
    rhoIm,
  };
}

function largestEigenvalue(re: number[][], im: number[][]): number {
  const m = realEmbedding({ dim: re.length, re: new Matrix(re), im: new Matrix(im) });
  return Math.max(...new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues);
}

function expectClose(actual: number[][], expected: number[][], digits: number): void {
  expected.forEach((row, i) => row.forEach((x, j) => expect(actual[i][j]).toBeCloseTo(x, digits)));
}

// Ground states of random small specs (seeds chosen for a non-degenerate ground state, checked), observables from rungchain's
// pipeline against the same quantities evaluated on ml-matrix's dense ground state of the plain
// reference Hamiltonian (tests/support/fockReference.ts).
describe('itinerant observables against a dense reference ground state', () => {
  const cases: [
    number,
    Kind,
    number,
    number,
    number,
    { periodic?: boolean; complex?: boolean; maxPerSite?: number },
  ][] = [
    [42, 'hardcore', 5, 3, 3, { periodic: true }],
    [47, 'hardcore', 4, 2, 2, { periodic: false, complex: true }],
    [46, 'fermion', 4, 2, 3, { periodic: true }],
    [41, 'fermion', 5, 2, 4, { periodic: true, complex: true }],
    [45, 'boson', 4, 2, 4, { periodic: true, maxPerSite: 3 }],
    [46, 'boson', 3, 3, 3, { periodic: false, complex: true }],
  ];
  for (const [seed, kind, L, N, Np, options] of cases) {
    it(`${kind} seed ${seed}: L=${L} N=${N} Np=${Np}${options.complex ? ' complex' : ''}`, () => {
      const raw = randomItinerantSpec(seed, kind, L, N, Np, options);
      raw.solve = { states: 2, tolerance: 1e-11 };
      const spec = validateSpec(raw);
      const ref = denseFockHamiltonian(spec);
      let re: number[];
      let im: number[];
      if (!options.complex) {
        const g = denseGround(ref);
        expect(g.values[1] - g.values[0]).toBeGreaterThan(1e-6); // a unique ground state to compare
        re = g.vectors[0];
        im = new Array<number>(ref.dim).fill(0);
      } else {
        // Real embedding [[A, -B], [B, A]]: an eigenvector (u; v) gives psi = u + i v.
        const n = ref.dim;
        const evd = new EigenvalueDecomposition(realEmbedding(ref), { assumeSymmetric: true });
        const order = evd.realEigenvalues.map((e, k) => [e, k]).sort((a, b) => a[0] - b[0]);
        expect(order[2][0] - order[0][0]).toBeGreaterThan(1e-6); // each level appears twice in the embedding
        const v = evd.eigenvectorMatrix.getColumn(order[0][1]);
        const norm = Math.hypot(...v);
        re = v.slice(0, n).map((x) => x / norm);
        im = v.slice(n).map((x) => x / norm);
      }
      const expected = referenceObservables(spec, ref, re, im);
      const record = solvePoint(spec).record;
      const o = record.observables as Record<string, any>;
      expect(record.solver.degeneracy).toBe(1);
      expectClose(o.populations, expected.populations, 8);
      expectClose([o.density], [expected.density], 8);
      expectClose([o.double_occupancy], [expected.doubleOccupancy], 8);
      expectClose([o.level_mean], [expected.levelMean], 8);
      expectClose([o.spread], [expected.spread], 8);
      expectClose(o.pair_separation, expected.pairSeparation, 8);
      expect(o.string_width).toBeCloseTo(expected.width, 8);
      expectClose(o.one_body_density_matrix, expected.rhoRe, 8);
      if (options.complex) expectClose(o.one_body_density_matrix_imag, expected.rhoIm, 8);
      expect(o.condensate_fraction).toBeCloseTo(largestEigenvalue(expected.rhoRe, expected.rhoIm) / Np, 8);
      if (options.periodic) {
        // n(k) = (1/L) sum_ij e^{ik(i-j)} rho_ij (definition of the momentum occupation, common practice)
        for (let m = 0; m < L; m++) {
          const k = (2 * Math.PI * m) / L;
          let nk = 0;
          for (let i = 0; i < L; i++)
            for (let j = 0; j < L; j++)
              nk += Math.cos(k * (i - j)) * expected.rhoRe[i][j] - Math.sin(k * (i - j)) * expected.rhoIm[i][j];
          expect(o.momentum_distribution[m]).toBeCloseTo(nk / L, 8);
        }
      } else {
        expect(o.momentum_distribution).toBeNull();
      }
      // sum_n <a+_{i,n} a_{i,n}> is the density: a cross-check of the reference's ladder operators.
      if (!options.complex) {
        for (let i = 0; i < L; i++) {
          let d = 0;
          for (let n = 0; n < N; n++)
            d += expectation(spec, ref, re, [
              { mode: i * N + n, dagger: true },
              { mode: i * N + n, dagger: false },
            ]);
          expect(d).toBeCloseTo(expected.density[i], 10);
        }
      }
    });
  }
});

describe('itinerant observables against textbook limits', () => {
  // The ideal Bose gas on a ring condenses entirely into k = 0: the ground state is
  // (a+_{k=0})^Np |0> / sqrt(Np!), so n(0) = Np and the condensate fraction is 1 (Penrose and
  // Onsager, Phys. Rev. 104, 576 (1956); textbook ideal Bose gas).
  it('free bosons on a ring: n(k=0) = Np, condensate fraction 1', () => {
    const L = 6;
    const Np = 3;
    const o = solvePoint(
      validateSpec({
        chain: { sites: L, boundary: 'periodic' },
        levels: { count: 1 },
        particles: { kind: 'boson', number: Np, hopping: 0.8 },
        solve: { states: 2 },
      }),
    ).record.observables as Record<string, any>;
    expect(o.condensate_fraction).toBeCloseTo(1, 10);
    expect(o.momentum_distribution[0]).toBeCloseTo(Np, 10);
    for (let m = 1; m < L; m++) expect(o.momentum_distribution[m]).toBeCloseTo(0, 10);
    // Np independent particles each at site i with probability 1/L: each of the C(Np,2) pairs shares
    // site i with probability 1/L^2, so <N_i (N_i - 1)/2> = C(Np,2) / L^2 (multinomial counting).
    for (let i = 0; i < L; i++) expect(o.double_occupancy[i]).toBeCloseTo((Np * (Np - 1)) / 2 / (L * L), 10);
  });

  // Free fermions, closed shell on a ring: the Fermi sea fills k = 2 pi m / L for |m| <= (Np-1)/2
  // once each, n(k) is a step, and every natural orbital holds one particle, so the largest
  // eigenvalue of rho is 1 (textbook Fermi sea).
  it('free fermions on a ring, closed shell: n(k) is the Fermi step, condensate fraction 1/Np', () => {
    const L = 9;
    const Np = 5;
    const o = solvePoint(
      validateSpec({
        chain: { sites: L, boundary: 'periodic' },
        levels: { count: 1 },
        particles: { kind: 'fermion', number: Np, hopping: 1.2 },
        solve: { states: 2 },
      }),
    ).record.observables as Record<string, any>;
    for (let m = 0; m < L; m++) {
      const mm = m <= L / 2 ? m : m - L; // m as a signed wave number
      expect(o.momentum_distribution[m]).toBeCloseTo(Math.abs(mm) <= (Np - 1) / 2 ? 1 : 0, 10);
    }
    expect(o.condensate_fraction).toBeCloseTo(1 / Np, 10);
    for (let i = 0; i < L; i++) expect(o.density[i]).toBeCloseTo(Np / L, 10);
  });

  // Two bosons on two sites: E0(U) = (U - sqrt(U^2 + 16 t^2)) / 2, so by the Hellmann-Feynman theorem the
  // total double occupancy sum_i <N_i (N_i - 1)/2> = dE0/dU = (1 - U / sqrt(U^2 + 16 t^2)) / 2.
  it.each([0.5, 2, 7])('two-site Bose-Hubbard, U/t = %f: double occupancy = dE0/dU (Hellmann-Feynman)', (U) => {
    const t = 1;
    const o = solvePoint(
      validateSpec({
        chain: { sites: 2 },
        levels: { count: 1 },
        particles: { kind: 'boson', number: 2, hopping: t, onsite: U },
      }),
    ).record.observables as Record<string, any>;
    const expected = (1 - U / Math.sqrt(U * U + 16 * t * t)) / 2;
    expect(o.double_occupancy[0] + o.double_occupancy[1]).toBeCloseTo(expected, 10);
  });

  it('hard-core bosons never share a site', () => {
    const o = solvePoint(validateSpec(randomItinerantSpec(51, 'hardcore', 5, 2, 3, { periodic: true }))).record
      .observables as Record<string, any>;
    for (const x of o.double_occupancy) expect(x).toBe(0);
  });
});
