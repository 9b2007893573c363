// level_correlation and level_structure_factor of a solved point against the plain dense build of
// docs/model.md (tests/support/occupationReference.ts, ml-matrix's dense eigensolver): small random
// specs of every particle kind, both symmetry settings, with deliberately degenerate ground levels
// (H = 0, free molecules, charge-conserving chains), where the expected value is the equal
// mixture's connected correlation. Two closed forms besides: free molecules are a product state,
// whose connected correlation between different sites vanishes; a state of definite total level
// charge Q = sum_j n_j has sum_j (<n_i n_j> - <n_i><n_j>) = <n_i Q> - <n_i> Q = 0.

import { describe, expect, it } from 'vitest';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, groundMixture, type Kind, type ModelDescription } from '../support/occupationReference.js';
import { rng } from '../support/random.js';

type Category = 'generic' | 'zero' | 'free' | 'charge';

interface Case {
  model: ModelDescription;
  spec: Record<string, unknown>;
}

function makeCase(r: () => number, kind: Kind, category: Category, symmetries: 'auto' | 'none'): Case {
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const N = pick([2, 3]);
  const L = kind === 'pinned' ? pick([3, 4, 5]) : pick([3, 4]);
  const particles = kind === 'pinned' ? L : pick([1, 2, 3]);
  const maxPerSite = kind === 'boson' ? 2 : 1;
  const periodic = r() < 0.6;
  const links = N - 1;
  let tunnelling = Array.from({ length: links }, () => u(0.3, 1.2));
  let detuning = Array.from({ length: N }, () => u(-1, 1));
  let exchange = u(-1.5, 1.5);
  let hopping = kind === 'pinned' ? 0 : u(-1, 1);
  if (category === 'zero') {
    tunnelling = tunnelling.map(() => 0);
    detuning = detuning.map(() => 0);
    exchange = 0;
    hopping = 0;
  } else if (category === 'free') {
    exchange = 0;
    hopping = 0;
  } else if (category === 'charge') {
    tunnelling = tunnelling.map(() => 0);
    detuning = detuning.map((_, n) => 0.5 * n);
    exchange = pick([1, -1]);
  }
  const model: ModelDescription = {
    sites: L,
    periodic,
    levels: N,
    ring: false,
    tunnelling,
    phase: tunnelling.map(() => 0),
    detuning,
    exchange,
    exchangeRange: 'nearest',
    exchangeCutoff: null,
    weights: Array.from({ length: N - 1 }, () => 1),
    ising: 0,
    moments: Array.from({ length: N }, () => 0),
    isingRange: 'nearest',
    isingCutoff: null,
    kind,
    particles,
    hopping,
    maxPerSite,
    onsite: 0,
  };
  const particlesSpec: Record<string, unknown> = { kind };
  if (kind !== 'pinned') {
    particlesSpec.number = particles;
    particlesSpec.hopping = hopping;
    if (kind === 'boson') particlesSpec.max_per_site = maxPerSite;
  }
  const spec = {
    chain: { sites: L, boundary: periodic ? 'periodic' : 'open' },
    levels: { count: N, tunnelling, detuning },
    exchange: { strength: exchange },
    particles: particlesSpec,
    solve: { states: 1, tolerance: 1e-11, symmetries },
  };
  return { model, spec };
}

/** The equal mixture's <n_i n_j> - <n_i><n_j>, n_i = sum_a a n_{i,a}, from the dense projector's diagonal. */
function denseCorrelation(c: Case): { correlation: number[][]; degeneracy: number } {
  const h = buildDense(c.model);
  const g = groundMixture(h, 1e-11);
  const L = c.model.sites;
  const N = c.model.levels;
  const mean = new Array<number>(L).fill(0);
  const moment = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  h.configs.forEach((occ, s) => {
    const p = g.projectorRe[s * h.dim + s] / g.degeneracy;
    const n = Array.from({ length: L }, (_, i) => {
      let x = 0;
      for (let a = 0; a < N; a++) x += a * occ[i * N + a];
      return x;
    });
    for (let i = 0; i < L; i++) {
      mean[i] += p * n[i];
      for (let j = 0; j < L; j++) moment[i][j] += p * n[i] * n[j];
    }
  });
  return {
    correlation: moment.map((row, i) => row.map((x, j) => x - mean[i] * mean[j])),
    degeneracy: g.degeneracy,
  };
}

/** The definition of docs/model.md written out with complex exponentials. */
function structureFactor(correlation: number[][]): number[] {
  const L = correlation.length;
  return Array.from({ length: L }, (_, m) => {
    const q = (2 * Math.PI * m) / L;
    let re = 0;
    let im = 0;
    for (let i = 0; i < L; i++)
      for (let j = 0; j < L; j++) {
        re += Math.cos(q * (i - j)) * correlation[i][j];
        im += Math.sin(q * (i - j)) * correlation[i][j];
      }
    expect(Math.abs(im)).toBeLessThan(1e-9);
    return re / L;
  });
}

function solved(spec: Record<string, unknown>) {
  return solvePoint(validateSpec(JSON.parse(JSON.stringify(spec)))).record;
}

const KINDS: Kind[] = ['pinned', 'hardcore', 'boson', 'fermion'];
const CATEGORIES: Category[] = ['generic', 'zero', 'free', 'charge'];

describe('level_correlation and level_structure_factor against a dense calculation', () => {
  for (const kind of KINDS)
    for (const symmetries of ['auto', 'none'] as const)
      it(`${kind}, symmetries ${symmetries}`, () => {
        const r = rng(KINDS.indexOf(kind) * 101 + (symmetries === 'auto' ? 7 : 13));
        let degenerate = 0;
        for (const category of CATEGORIES)
          for (let trial = 0; trial < 3; trial++) {
            const c = makeCase(r, kind, category, symmetries);
            const record = solved(c.spec);
            const { correlation, degeneracy } = denseCorrelation(c);
            expect(record.solver.degeneracy).toBe(degeneracy);
            if (degeneracy > 1) degenerate++;
            const got = record.observables.level_correlation as number[][];
            const L = c.model.sites;
            expect(got).toHaveLength(L);
            for (let i = 0; i < L; i++) for (let j = 0; j < L; j++) expect(got[i][j]).toBeCloseTo(correlation[i][j], 7);
            const factor = record.observables.level_structure_factor;
            if (!c.model.periodic) expect(factor).toBeNull();
            else {
              const expected = structureFactor(correlation);
              (factor as number[]).forEach((x, m) => expect(x).toBeCloseTo(expected[m], 7));
            }
          }
        expect(degenerate).toBeGreaterThan(0);
      });
});

describe('closed forms', () => {
  it('free molecules (no exchange): zero connected correlation between different sites, a product state', () => {
    const r = rng(2026);
    for (const symmetries of ['auto', 'none'] as const)
      for (let trial = 0; trial < 6; trial++) {
        const c = makeCase(r, 'pinned', 'free', symmetries);
        const got = solved(c.spec).observables.level_correlation as number[][];
        got.forEach((row, i) =>
          row.forEach((x, j) => {
            if (i !== j) expect(Math.abs(x)).toBeLessThan(1e-9);
          }),
        );
      }
  });

  it('XX ring, no tunnelling: sum_j level_correlation[i][j] = 0 at conserved total level charge', () => {
    for (const symmetries of ['auto', 'none'] as const)
      for (const [L, detuning] of [
        [5, 0.37],
        [6, -0.61],
        [4, 1.13],
      ] as const) {
        const record = solved({
          chain: { sites: L, boundary: 'periodic' },
          levels: { count: 2, tunnelling: 0, detuning: [0, detuning] },
          exchange: { strength: 1 },
          solve: { states: 1, tolerance: 1e-11, symmetries },
        });
        const c = record.observables.level_correlation as number[][];
        for (const row of c) expect(Math.abs(row.reduce((s, x) => s + x, 0))).toBeLessThan(1e-9);
        // S(q = 0) = (1/L) sum_ij C_ij, the same sum rule.
        expect(Math.abs((record.observables.level_structure_factor as number[])[0])).toBeLessThan(1e-9);
      }
  });
});
