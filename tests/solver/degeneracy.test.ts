// Every copy of the ground level, whatever `solve.states` is: the degeneracy and the observables
// averaged over the ground space, checked against ml-matrix's dense eigensolver on the plain dense
// builds of tests/support (the ground space's equal mixture has p(s) = (1/g) sum_k |v_k(s)|^2, the
// diagonal of its projector, which does not depend on the basis chosen inside the level).

import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { planEvolution, runEvolution } from '../../src/dynamics/evolution.js';
import type { HermitianOperator } from '../../src/operator/hermitian.js';
import { buildBasis, type PinnedBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import { solveInSectors } from '../../src/symmetry/sectorSolve.js';
import { detectSymmetries, type SymmetryName } from '../../src/symmetry/group.js';
import { lowestEigenpairs } from '../../src/solver/eigensolver.js';
import { validateSpec, type Spec } from '../../src/spec/spec.js';
import { describeRecord } from '../../src/point/describe.js';
import { denseFockHamiltonian, randomItinerantSpec } from '../support/fockReference.js';
import { clean, randomPinnedSpec } from '../support/random.js';
import { densePinnedHamiltonian, realEmbedding, type DenseHermitian } from '../support/reference.js';

/** Two dense eigenvalues this close (relative, at least 1e-8 absolute) are one level: common practice for exact degeneracies. */
const LEVEL_WINDOW = 1e-8;

/** The ground level's multiplicity and its equal mixture's basis-state probabilities, densely. */
function denseGroundMixture(h: DenseHermitian): { count: number; energy: number; probabilities: number[] } {
  const n = h.dim;
  let real = true;
  for (let r = 0; r < n && real; r++)
    for (let c = 0; c < n; c++)
      if (h.im.get(r, c) !== 0) {
        real = false;
        break;
      }
  const matrix: Matrix = real ? h.re : realEmbedding(h);
  const evd = new EigenvalueDecomposition(matrix, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k] as const).sort((a, b) => a[0] - b[0]);
  const e0 = order[0][0];
  const ground = order.filter(([e]) => e - e0 <= LEVEL_WINDOW * Math.max(1, Math.abs(e0)));
  const probabilities = new Array<number>(n).fill(0);
  for (const [, k] of ground) {
    const v = evd.eigenvectorMatrix.getColumn(k);
    let norm = 0;
    for (const x of v) norm += x * x;
    // A complex level appears twice in the real embedding: (u; w) and (-w; u) are one direction.
    for (let s = 0; s < n; s++) probabilities[s] += (real ? v[s] ** 2 : v[s] ** 2 + v[s + n] ** 2) / norm;
  }
  const count = real ? ground.length : ground.length / 2;
  return { count, energy: e0, probabilities: probabilities.map((p) => p / ground.length) };
}

/** populations[i][n] of a pinned chain from p(s), site i being digit i of s (tests/support/reference.ts). */
function pinnedPopulations(spec: Spec, p: number[]): number[][] {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  const pop = Array.from({ length: L }, () => new Array<number>(N).fill(0));
  p.forEach((q, s) => {
    for (let i = 0, rest = s; i < L; i++, rest = Math.floor(rest / N)) pop[i][rest % N] += q;
  });
  return pop;
}

/** Mean occupation of mode (i, n) for an itinerant kind. */
function itinerantPopulations(spec: Spec, states: number[][], p: number[]): number[][] {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  const pop = Array.from({ length: L }, () => new Array<number>(N).fill(0));
  p.forEach((q, s) => {
    for (let i = 0; i < L; i++) for (let n = 0; n < N; n++) pop[i][n] += q * states[s][i * N + n];
  });
  return pop;
}

function expectAgreement(record: PointRecord, count: number, energy: number, populations: number[][]): void {
  expect(record.solver.degeneracy_complete).toBe(true);
  expect(record.solver.degeneracy).toBe(count);
  expect(record.energies[0]).toBeCloseTo(energy, 8);
  record.observables.populations.forEach((row, i) =>
    row.forEach((q, n) => expect(Math.abs(q - populations[i][n])).toBeLessThan(1e-8)),
  );
}

/** Solves a pinned spec with every symmetry setting and checks each against the dense mixture. */
function checkPinned(raw: Record<string, any>, settings: ('auto' | 'none')[] = ['auto', 'none']): PointRecord[] {
  const spec = validateSpec(clean(raw));
  const reference = denseGroundMixture(densePinnedHamiltonian(spec));
  const populations = pinnedPopulations(spec, reference.probabilities);
  return settings.map((symmetries) => {
    const record = solvePoint(validateSpec(clean({ ...raw, solve: { ...raw.solve, symmetries } })), {
      groundStates: false,
    }).record;
    expectAgreement(record, reference.count, reference.energy, populations);
    expect(record.energies).toHaveLength(Math.min(spec.solve.states, reference.probabilities.length));
    return record;
  });
}

function checkItinerant(raw: Record<string, any>): PointRecord {
  const spec = validateSpec(clean(raw));
  const ref = denseFockHamiltonian(spec);
  const reference = denseGroundMixture({ dim: ref.dim, re: ref.re, im: ref.im });
  const record = solvePoint(spec, { groundStates: false }).record;
  expectAgreement(
    record,
    reference.count,
    reference.energy,
    itinerantPopulations(spec, ref.states, reference.probabilities),
  );
  return record;
}

const free = (sites: number, levels: Record<string, unknown>, states: number, boundary = 'open') => ({
  chain: { sites, boundary },
  levels,
  exchange: { strength: 0 },
  solve: { states, tolerance: 1e-10 },
});

describe('every copy of the ground level is found, whatever solve.states is', () => {
  it('four free three-level sites (H = 0): 81 copies, populations 1/3, in sectors and in the full space', () => {
    const [auto, none] = checkPinned(free(4, { count: 3, tunnelling: 0 }, 4));
    for (const r of [auto, none])
      r.observables.populations.forEach((row) => row.forEach((q) => expect(q).toBeCloseTo(1 / 3, 12)));
    expect(auto.solver.degeneracy).toBe(81);
  });

  it('two free three-level sites without symmetries: 9 of 9', () => {
    checkPinned(free(2, { count: 3, tunnelling: 0 }, 4), ['none']);
  });

  it('a three-level ring with flux pi/3 and states = 1: the two-fold level E = -1, equal populations', () => {
    // One molecule: h has eigenvalues -2 cos(phi + 2 pi q / 3), q = 0, 1, 2 (a ring of three levels
    // threaded by 3 phi); at phi = pi/3 the lowest, -1, is two-fold and its mixture is uniform.
    const [auto, none] = checkPinned(free(1, { count: 3, boundary: 'ring', phase: Math.PI / 3 }, 1));
    for (const r of [auto, none]) {
      expect(r.energies).toHaveLength(1);
      expect(r.energies[0]).toBeCloseTo(-1, 12);
      r.observables.populations[0].forEach((q) => expect(q).toBeCloseTo(1 / 3, 12));
    }
  });

  it('free molecules with degenerate ladders on a periodic chain (Lanczos, sectors): 2^5 copies', () => {
    const [auto, none] = checkPinned(free(5, { count: 3, boundary: 'ring', phase: Math.PI / 3 }, 2, 'periodic'));
    expect(none.solver.degeneracy).toBe(32);
    expect(auto.solver.degeneracy).toBe(32);
  });

  it('a pinned ring with a Peierls phase and a two-fold +-k ground pair, states = 1', () => {
    checkPinned({
      chain: { sites: 5, boundary: 'periodic' },
      levels: { count: 2, phase: 0.3 },
      exchange: { strength: 1 },
      solve: { states: 1, tolerance: 1e-10 },
    });
  });

  it('a pinned chain whose level flip and translations make the ground level degenerate, states = 1', () => {
    // Odd periodic exchange chains with mirror-symmetric couplings: the ground level sits at k != 0
    // and is shared with -k (and, through the level flip, with its partner sector).
    checkPinned({
      chain: { sites: 5, boundary: 'periodic' },
      levels: { count: 3, tunnelling: 0.3 },
      exchange: { strength: 1, weights: 'uniform' },
      solve: { states: 1, tolerance: 1e-10 },
    });
  });

  it('random pinned chains with every term on: degeneracy and populations as the dense mixture, both symmetry settings', () => {
    for (let seed = 1; seed <= 6; seed++) {
      const raw = randomPinnedSpec(700 + seed, seed % 2 === 0 ? 4 : 3, 3);
      raw.solve = { states: 1 + (seed % 3), tolerance: 1e-10 };
      checkPinned(raw);
    }
  });

  it('itinerant kinds: random specs, and free particles whose ground level is degenerate', () => {
    for (const kind of ['hardcore', 'boson', 'fermion'] as const) {
      checkItinerant({
        ...randomItinerantSpec(90 + kind.length, kind, 3, 2, 2, { complex: true }),
        solve: { states: 1, tolerance: 1e-10 },
      });
      // No hopping, no exchange, a ring of three levels with flux pi/3 on every site: each particle's
      // lowest level is two-fold, and the many-particle ground level more so.
      checkItinerant({
        chain: { sites: 3 },
        levels: { count: 3, boundary: 'ring', phase: Math.PI / 3 },
        exchange: { strength: 0 },
        particles: { kind, number: 2, hopping: 0 },
        solve: { states: 1, tolerance: 1e-10 },
      });
    }
  });

  it('a level with more copies than the cap is reported incomplete, with a warning in the table', () => {
    // Seven free rings with flux: 2^7 = 128 copies, more than the full space's cap of 64, on
    // vectors too long for the dense fallback.
    const raw = free(7, { count: 3, boundary: 'ring', phase: Math.PI / 3 }, 1);
    const none = solvePoint(validateSpec(clean({ ...raw, solve: { ...raw.solve, symmetries: 'none' } })), {
      groundStates: false,
    }).record;
    expect(none.solver.degeneracy_complete).toBe(false);
    expect(none.solver.degeneracy).toBeGreaterThanOrEqual(64);
    expect(describeRecord(none)).toMatch(/WARNING: not every copy of the ground level was found/);
    const complete = checkPinned(free(4, { count: 3, tunnelling: 0 }, 1), ['none'])[0];
    expect(describeRecord(complete)).not.toMatch(/WARNING/);
  });
});

describe('lowestEigenpairs with groundCopies', () => {
  /** A diagonal operator: its eigenvalues are its entries (`copies` zeros, then 1, 1.01, 1.02, ...). */
  function diagonal(dim: number, copies: number, isComplex = false): HermitianOperator {
    const d = Float64Array.from({ length: dim }, (_, k) => (k < copies ? 0 : 1 + 0.01 * (k - copies)));
    // Copies spread over the index range, so no start vector favours them.
    const order = Array.from({ length: dim }, (_, k) => (k * 7919) % dim);
    const entry = new Float64Array(dim);
    order.forEach((at, k) => (entry[at] = d[k]));
    return {
      dim,
      isComplex,
      apply(x, y) {
        const w = isComplex ? 2 : 1;
        for (let s = 0; s < dim; s++) for (let c = 0; c < w; c++) y[w * s + c] = entry[s] * x[w * s + c];
      },
    };
  }
  const solve = (op: HermitianOperator, states: number, groundCopies: number) =>
    lowestEigenpairs(op, { states, tolerance: 1e-10, groundCopies });

  it('a single ground state at a cap of one is shown complete with one screen (no dense fallback at this length)', () => {
    const r = solve(diagonal(2000, 1), 1, 1);
    expect(r.method).toBe('lanczos');
    expect(r.degeneracy).toBe(1);
    expect(r.degeneracyComplete).toBe(true);
  });

  it('a three-fold level with states = 1: all three, real and complex', () => {
    for (const isComplex of [false, true]) {
      const r = solve(diagonal(2000, 3, isComplex), 1, 64);
      expect(r.degeneracy).toBe(3);
      expect(r.degeneracyComplete).toBe(true);
      expect(r.values).toHaveLength(3);
      r.values.forEach((e) => expect(Math.abs(e)).toBeLessThan(1e-9));
    }
  });

  it('past the cap: incomplete on long vectors, the dense fallback on short ones', () => {
    const capped = solve(diagonal(2000, 3), 1, 2);
    expect(capped.degeneracyComplete).toBe(false);
    const long = solve(diagonal(2000, 100), 2, 64);
    expect(long.degeneracyComplete).toBe(false);
    expect(long.degeneracy).toBeGreaterThanOrEqual(64);
    const short = solve(diagonal(800, 100), 2, 64);
    expect(short.method).toBe('dense');
    expect(short.degeneracy).toBe(100);
    expect(short.degeneracyComplete).toBe(true);
  });

  it('the dense path returns the whole level when asked, only `states` otherwise', () => {
    expect(solve(diagonal(50, 5), 1, 64).degeneracy).toBe(5);
    expect(lowestEigenpairs(diagonal(50, 5), { states: 1, tolerance: 1e-10 }).degeneracy).toBe(1);
  });
});

describe('time evolution: the weight in the ground space counts every copy', () => {
  // Sudden approximation (textbook): a ramp far faster than every energy scale leaves the state
  // unchanged. Ramping the tunnelling of three free two-level molecules to 0 ends at H = 0, whose
  // ground space is the whole 8-state space: every state has weight 1 in it.
  it('a sudden ramp to H = 0: ground overlap 1', () => {
    const tree = clean({
      chain: { sites: 3 },
      levels: { count: 2, tunnelling: 1 },
      exchange: { strength: 0 },
      evolve: {
        initial: 'ground_state',
        times: [0, 1e-6],
        tolerance: 1e-10,
        ramp: { key: 'levels.tunnelling', from: 1, to: 0, duration: 1e-6, steps: 1 },
      },
    });
    const r = runEvolution(planEvolution(tree, validateSpec(tree)));
    expect(r.frames[1].observables.ground_overlap).toBeCloseTo(1, 9);
  });
});

describe('sectors on one thread and on two: every copy in every sector', () => {
  // Seven free molecules on a ring, each a three-level ring threaded by flux pi (phase pi/3 per
  // link): each molecule's lowest level is two-fold, spanned by two of its ring's Fourier modes,
  // whose weights on the three levels are all 1/3 (Bloch's theorem on a ring of three). The chain's
  // ground level is 2^7 = 128-fold and its equal mixture is uniform over the 3^7 basis states.
  it('2^7 copies spread over the momentum sectors, uniform probabilities', () => {
    const spec = validateSpec(clean(free(7, { count: 3, boundary: 'ring', phase: Math.PI / 3 }, 1, 'periodic')));
    const model = buildModel(spec);
    const basis = buildBasis(model) as PinnedBasis;
    const used = Object.fromEntries(detectSymmetries(model, basis).map((c) => [c.name, c.present])) as Record<
      SymmetryName,
      boolean
    >;
    expect(used.translation).toBe(true);
    for (const sectorThreads of [1, 2]) {
      const solution = solveInSectors(model, basis, used, {
        states: 1,
        tolerance: 1e-10,
        groundCopies: 64,
        sectorThreads,
      });
      expect(solution.degeneracy).toBe(128);
      expect(solution.degeneracyComplete).toBe(true);
      expect(solution.runs.some((r) => r.method === 'lanczos')).toBe(true);
      let worst = 0;
      solution.groundProbabilities.forEach((p) => (worst = Math.max(worst, Math.abs(p - 3 ** -7))));
      expect(worst).toBeLessThan(1e-10);
    }
  });
});
