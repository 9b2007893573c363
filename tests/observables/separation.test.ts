// level_correlation_by_separation (docs/model.md): on periodic ladders, square and triangular
// lattices, level_correlation[i][j] averaged over the pairs sharing a separation vector. Checked
// against the connected correlation of the dense ground mixture (tests/support/occupationReference.ts,
// ml-matrix), grouped here by hand from the lattice coordinates of the documented site order
// (row-major, x fastest): two pairs share a vector when their coordinate differences agree modulo
// the size of each periodic direction. Every kind, both symmetry settings, degenerate cases.
import { describe, expect, it } from 'vitest';
import { solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, groundMixture, type Kind } from '../support/occupationReference.js';
import { describeCase, referenceSites, type LatticeRaw } from '../support/latticeReference.js';
import { rng } from '../support/random.js';

const solve = (raw: Record<string, unknown>): PointRecord =>
  solvePoint(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>)).record;

interface Entry {
  separation: number[];
  distance: number;
  pairs: number;
  value: number;
}

const bySeparation = (record: PointRecord): Entry[] | null =>
  (record.observables as unknown as Record<string, unknown>).level_correlation_by_separation as Entry[] | null;

/** Lattice coordinates (x, y) of each site and the sizes, for a ladder, square or triangular lattice. */
function coordinates(l: LatticeRaw): { xy: number[][]; size: number[] } {
  const size = l.shape === 'ladder' && l.size!.length === 1 ? [l.size![0], 2] : l.size!;
  const xy: number[][] = [];
  for (let y = 0; y < size[1]; y++) for (let x = 0; x < size[0]; x++) xy.push([x, y]);
  return { xy, size };
}

interface Scenario {
  name: string;
  lattice: LatticeRaw;
  kind: Kind;
  degenerate: boolean;
  levels: number;
  complex: boolean;
}

const SCENARIOS: Scenario[] = [
  {
    name: 'periodic ladder, pinned',
    lattice: { shape: 'ladder', size: [4], boundary: ['periodic', 'open'] },
    kind: 'pinned',
    degenerate: false,
    levels: 2,
    complex: true,
  },
  {
    name: 'periodic ladder, hard-core bosons, degenerate',
    lattice: { shape: 'ladder', size: [3], boundary: ['periodic', 'open'], field: [1, 0, 1] },
    kind: 'hardcore',
    degenerate: true,
    levels: 2,
    complex: false,
  },
  {
    name: '3x3 periodic square, pinned, tilted field',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'], field: [0.3, 0.5, 1] },
    kind: 'pinned',
    degenerate: false,
    levels: 2,
    complex: false,
  },
  {
    name: '3x3 periodic square, pinned, degenerate',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'] },
    kind: 'pinned',
    degenerate: true,
    levels: 2,
    complex: false,
  },
  {
    name: '3x2 square periodic along x, fermions',
    lattice: { shape: 'square', size: [3, 2], boundary: ['periodic', 'open'] },
    kind: 'fermion',
    degenerate: false,
    levels: 2,
    complex: true,
  },
  {
    name: '3x3 periodic triangular, pinned',
    lattice: { shape: 'triangular', size: [3, 3], boundary: ['periodic', 'periodic'], field: [1, 0, 0] },
    kind: 'pinned',
    degenerate: false,
    levels: 2,
    complex: false,
  },
  {
    name: '3x3 periodic triangular, bosons',
    lattice: { shape: 'triangular', size: [3, 3], boundary: ['periodic', 'periodic'] },
    kind: 'boson',
    degenerate: false,
    levels: 2,
    complex: true,
  },
  {
    name: '4x3 periodic square, 3 levels, hard-core bosons',
    lattice: { shape: 'square', size: [4, 3], boundary: ['periodic', 'periodic'] },
    kind: 'hardcore',
    degenerate: false,
    levels: 3,
    complex: false,
  },
];

function specOf(s: Scenario, seed: number): Record<string, any> {
  const r = rng(seed);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const N = s.levels;
  const spec: Record<string, any> = {
    lattice: s.lattice,
    levels: {
      count: N,
      tunnelling: Array.from({ length: N - 1 }, () => (s.degenerate ? 0 : u(0.3, 1.2))),
      phase: Array.from({ length: N - 1 }, () => (s.complex && !s.degenerate ? u(-3, 3) : 0)),
      detuning: Array.from({ length: N }, () => (s.degenerate ? 0 : u(-0.8, 0.8))),
    },
    exchange: { strength: u(0.5, 1.5), range: 'dipolar' },
    ising: {
      strength: u(-1, 1),
      moments: Array.from({ length: N }, (_, n) => (s.degenerate ? n - (N - 1) / 2 : u(-1, 1))),
      range: 'nearest',
    },
    solve: { states: 2, symmetries: seed % 2 === 0 ? 'auto' : 'none', tolerance: 1e-11 },
  };
  if (s.kind !== 'pinned') {
    spec.particles = { kind: s.kind, number: 2, hopping: u(0.4, 1.2) };
    if (s.kind === 'boson') spec.particles.onsite = u(0, 2);
  }
  return spec;
}

describe('level_correlation_by_separation against the dense correlation, averaged by hand', () => {
  it.each(SCENARIOS.map((s, k) => [s.name, s, k] as const))('%s', (_, s, k) => {
    const spec = specOf(s, 300 + k);
    const model = describeCase(spec, s.kind);
    const h = buildDense(model);
    expect(h.dim).toBeLessThanOrEqual(1200);
    const g = groundMixture(h, spec.solve.tolerance as number);
    const record = solve(spec);
    expect(record.solver.degeneracy).toBe(g.degeneracy);
    if (s.degenerate) expect(g.degeneracy).toBeGreaterThan(1);
    // The mixture's connected correlation of n_i = sum_a a n_{i,a} (docs/model.md), from the
    // diagonal of the ground projector.
    const L = model.sites;
    const N = model.levels;
    const D = h.dim;
    const mean = new Array<number>(L).fill(0);
    const moment = Array.from({ length: L }, () => new Array<number>(L).fill(0));
    h.configs.forEach((occ, st) => {
      const w = g.projectorRe[st * D + st] / g.degeneracy;
      const n = Array.from({ length: L }, (_, i) => {
        let x = 0;
        for (let a = 0; a < N; a++) x += a * occ[i * N + a];
        return x;
      });
      for (let i = 0; i < L; i++) {
        mean[i] += w * n[i];
        for (let j = 0; j < L; j++) moment[i][j] += w * n[i] * n[j];
      }
    });
    const C = moment.map((row, i) => row.map((x, j) => x - mean[i] * mean[j]));
    // Groups of ordered pairs by coordinate difference modulo each periodic size.
    const { xy, size } = coordinates(s.lattice);
    const periodic = size.map((_, d) => s.lattice.boundary![d] === 'periodic');
    const groups = new Map<string, { diff: number[]; sum: number; count: number }>();
    for (let i = 0; i < L; i++)
      for (let j = 0; j < L; j++) {
        const diff = [0, 1].map((d) => {
          const x = xy[j][d] - xy[i][d];
          return periodic[d] ? ((x % size[d]) + size[d]) % size[d] : x;
        });
        const group = groups.get(diff.join(',')) ?? { diff, sum: 0, count: 0 };
        group.sum += C[i][j];
        group.count += 1;
        groups.set(diff.join(','), group);
      }
    const got = bySeparation(record);
    expect(got).not.toBeNull();
    expect(got!.length).toBe(groups.size);
    const { boxes } = referenceSites(s.lattice);
    // Every image of a coordinate difference, and the shortest ones: the entry's vector must be one of those.
    const a1 = [1, 0, 0];
    const a2 = s.lattice.shape === 'triangular' ? [0.5, Math.sqrt(3) / 2, 0] : [0, 1, 0];
    const above = g.values[g.degeneracy] ?? Infinity;
    const tol = 1e-8 + 1e-9 / Math.max(above - g.values[0], 1e-3);
    let matched = 0;
    for (const group of groups.values()) {
      const base = [0, 1, 2].map((c) => group.diff[0] * a1[c] + group.diff[1] * a2[c]);
      let images = [base];
      for (const B of boxes) images = images.flatMap((v) => [-1, 0, 1].map((n) => v.map((x, c) => x + n * B[c])));
      const shortest = Math.min(...images.map((v) => Math.hypot(v[0], v[1], v[2])));
      const candidates = images.filter((v) => Math.hypot(v[0], v[1], v[2]) - shortest < 1e-9);
      const entry = got!.find((e) => candidates.some((v) => v.every((x, c) => Math.abs(x - e.separation[c]) < 1e-9)));
      expect(entry, `separation ${group.diff.join(',')}`).toBeDefined();
      expect(entry!.pairs).toBe(group.count);
      expect(entry!.distance).toBeCloseTo(shortest, 12);
      expect(Math.abs(entry!.value - group.sum / group.count)).toBeLessThan(tol);
      matched++;
    }
    expect(matched).toBe(got!.length);
    // Pairs of every separation add up to all L^2 ordered pairs; the zero vector's value is the mean spread.
    expect(got!.reduce((n, e) => n + e.pairs, 0)).toBe(L * L);
    expect(got![0].separation).toEqual([0, 0, 0]);
  });
});

describe('null off translation-invariant geometries', () => {
  const levels = { count: 2, tunnelling: 0.7 };
  const exchange = { strength: 1 };
  it.each([
    ['an open square', { shape: 'square', size: [3, 3] }],
    ['a square periodic along x only, 3 rows', { shape: 'square', size: [3, 3], boundary: ['periodic', 'open'] }],
    ['a periodic square with a vacancy', { shape: 'square', size: [3, 3], boundary: 'periodic', vacancies: [4] }],
    [
      'a custom array',
      {
        shape: 'custom',
        positions: [
          [0, 0],
          [1, 0],
          [0, 1],
        ],
      },
    ],
    ['an open chain', { shape: 'chain', size: [4] }],
  ])('%s', (_, lattice) => {
    expect(bySeparation(solve({ lattice, levels, exchange, solve: { states: 1 } }))).toBeNull();
  });
  it('a periodic [chain] has one entry per distance d = 0..L-1 along x', () => {
    const got = bySeparation(solve({ chain: { sites: 5, boundary: 'periodic' }, levels, exchange }));
    // Minimum image on a ring of 5 (common practice): 0, +-1, +-2.
    expect(got!.map((e) => e.separation[0])).toEqual([0, -1, 1, -2, 2]);
  });
});
