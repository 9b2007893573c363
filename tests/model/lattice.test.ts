// Site geometry and dipolar couplings (issue 19), against the chain formulas of docs/model.md (the
// code before [lattice], kept in src/model/model.ts as pairCouplings and nearestNeighbourBonds) and
// against V (1 - 3 cos^2 theta) / r^3 written out here (textbook dipole-dipole interaction).
import { describe, expect, it } from 'vitest';
import { buildModel, nearestNeighbourBonds, pairCouplings, type PairList } from '../../src/model/model.js';
import { pairIndex } from '../../src/model/lattice.js';
import { describeGeometry, distinctCouplings } from '../../src/model/geometryText.js';
import { validateSpec } from '../../src/spec/spec.js';
import { rng } from '../support/random.js';

function arrays(list: PairList): { i: number[]; j: number[]; value: Float64Array } {
  return { i: Array.from(list.i), j: Array.from(list.j), value: list.value };
}

/** A random chain spec with every coupling on, as [chain]. */
function randomChain(rand: () => number): Record<string, any> {
  const periodic = rand() < 0.5;
  const sites = (periodic ? 3 : 1) + Math.floor(rand() * 9);
  const dipolar = () => rand() < 0.6;
  const exRange = dipolar() ? 'dipolar' : 'nearest';
  const isRange = dipolar() ? 'dipolar' : 'nearest';
  const exchange: Record<string, unknown> = { strength: rand() * 4 - 2, range: exRange };
  // A cutoff within half the ring, which [lattice] requires (beyond it every cutoff is the same as none).
  const half = periodic ? Math.floor(sites / 2) : sites;
  if (exRange === 'dipolar' && rand() < 0.5) exchange.cutoff = 1 + rand() * Math.max(0, half - 1);
  const ising: Record<string, unknown> = { strength: rand() * 4 - 2, moments: [0.3, -0.7, 1.1], range: isRange };
  if (isRange === 'dipolar' && rand() < 0.5) ising.cutoff = 1 + rand() * Math.max(0, half - 1);
  const kind = rand() < 0.5 ? 'pinned' : 'hardcore';
  const particles = kind === 'pinned' ? {} : { kind, number: 1, hopping: rand() + 0.1 };
  return {
    chain: { sites, boundary: periodic ? 'periodic' : 'open' },
    levels: { count: 3 },
    exchange,
    ising,
    particles,
  };
}

describe('chains through the lattice code reproduce the chain formulas bit for bit', () => {
  const rand = rng(1919);
  const cases = Array.from({ length: 40 }, () => randomChain(rand));
  it.each(cases.map((c, k) => [k, c] as const))('random chain %i', (_, raw) => {
    const { sites, boundary } = raw.chain as { sites: number; boundary: string };
    const periodic = boundary === 'periodic';
    const spec = validateSpec(structuredClone(raw));
    const ex = spec.exchange;
    const is = spec.ising;
    const hopping = spec.particles.kind === 'pinned' ? 0 : spec.particles.hopping;
    const expected = {
      exchange: arrays(pairCouplings(sites, periodic, ex.strength, ex.range, ex.cutoff)),
      ising: arrays(pairCouplings(sites, periodic, is.strength, is.range, is.cutoff)),
      bonds: arrays(nearestNeighbourBonds(sites, periodic, hopping)),
    };
    const variants: Record<string, any>[] = [
      spec,
      { ...raw, chain: undefined, lattice: { shape: 'chain', size: [sites], boundary } },
    ];
    // An open chain as custom positions along x.
    if (!periodic)
      variants.push({
        ...raw,
        chain: undefined,
        lattice: { shape: 'custom', positions: Array.from({ length: sites }, (_, i) => [i, 0]) },
      });
    for (const variant of variants) {
      const model = buildModel(variant === spec ? spec : validateSpec(JSON.parse(JSON.stringify(variant))));
      // toEqual on Float64Array compares every element with Object.is semantics: exact bits (bar NaN).
      expect(arrays(model.exchangePairs)).toEqual(expected.exchange);
      expect(arrays(model.isingPairs)).toEqual(expected.ising);
      expect(arrays(model.hoppingBonds)).toEqual(expected.bonds);
      expect(model.sites).toBe(sites);
    }
  });
});

describe('geometry', () => {
  it('numbers sites row-major, x fastest, and renumbers around vacancies', () => {
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'square', size: [3, 2], spacing: [1, 2], vacancies: [1] },
        levels: { count: 2 },
      }),
    );
    const g = model.geometry;
    expect(Array.from(g.latticeIndex)).toEqual([0, 2, 3, 4, 5]);
    expect(Array.from(g.positions)).toEqual([0, 0, 0, 2, 0, 0, 0, 2, 0, 1, 2, 0, 2, 2, 0]);
    expect(g.isChain).toBe(false);
    expect(model.chainPeriodic).toBe(false);
  });

  it('puts triangular sites on a1 = (1, 0), a2 = (1/2, sqrt 3 / 2): every neighbour at distance 1, six around an inner site', () => {
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'triangular', size: [3, 3] },
        levels: { count: 2 },
        particles: { kind: 'hardcore', number: 1, hopping: 1 },
      }),
    );
    const g = model.geometry;
    expect(g.positions[3 * 4]).toBeCloseTo(1.5, 15);
    expect(g.positions[3 * 4 + 1]).toBeCloseTo(Math.sqrt(3) / 2, 15);
    const degree = new Array<number>(9).fill(0);
    for (let b = 0; b < model.hoppingBonds.count; b++) {
      degree[model.hoppingBonds.i[b]]++;
      degree[model.hoppingBonds.j[b]]++;
    }
    // Common practice: the triangular lattice has coordination 6; a 3x3 open patch has 16 bonds.
    expect(degree[4]).toBe(6);
    expect(model.hoppingBonds.count).toBe(16);
  });

  it('minimum image on a periodic square lattice: the pair half a box apart averages its tied images', () => {
    // 4x4 periodic, field along x: the pair (0, 2) is 2 apart along x by both images (factor 1 - 3 = -2),
    // the pair (0, 8) 2 apart along y (factor 1); the pair (0, 10) at (2, 2) has four tied images, all
    // with cos^2 = 1/2, so factor 1 - 3/2 = -1/2.
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'square', size: [4, 4], boundary: 'periodic', field: [1, 0, 0] },
        levels: { count: 2 },
      }),
    );
    const g = model.geometry;
    const at = (i: number, j: number) => pairIndex(i, j, 16);
    expect(g.distance[at(0, 2)]).toBe(2);
    expect(g.angular[at(0, 2)]).toBe(-2);
    expect(g.angular[at(0, 8)]).toBe(1);
    expect(g.distance[at(0, 10)]).toBeCloseTo(Math.SQRT2 * 2, 14);
    expect(g.angular[at(0, 10)]).toBeCloseTo(-0.5, 14);
    // The pair (0, 3) wraps: distance 1 along x.
    expect(g.distance[at(0, 3)]).toBe(1);
    expect(g.wraps[at(0, 3)]).toBe(1);
  });

  it('dipolar couplings are V (1 - 3 cos^2 theta) / r^3 for a tilted field (textbook dipole-dipole interaction)', () => {
    const positions = [
      [0, 0, 0],
      [1, 0, 0],
      [0.3, 1.7, 0],
      [2, -1, 0.5],
    ];
    const field = [0.2, -0.5, 0.9];
    const norm = Math.hypot(...field);
    const V = 1.7;
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'custom', positions, field },
        levels: { count: 2 },
        exchange: { strength: V, range: 'dipolar' },
      }),
    );
    const pairs = model.exchangePairs;
    expect(pairs.count).toBe(6);
    for (let p = 0; p < pairs.count; p++) {
      const a = positions[pairs.i[p]];
      const b = positions[pairs.j[p]];
      const d = b.map((x, c) => x - a[c]);
      const r = Math.hypot(...d);
      const cos = (d[0] * field[0] + d[1] * field[1] + d[2] * field[2]) / (r * norm);
      expect(pairs.value[p]).toBeCloseTo((V * (1 - 3 * cos * cos)) / r ** 3, 13);
    }
  });

  it('"nearest" keeps the shortest separations only, with their angular factors', () => {
    // A 3x2 ladder with rungs 1.5 apart: only the legs (distance 1) are nearest.
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'ladder', size: [3], spacing: [1, 1.5], field: [1, 0, 1] },
        levels: { count: 2 },
        exchange: { strength: 1 },
        particles: { kind: 'hardcore', number: 1, hopping: 1 },
      }),
    );
    const pairs = model.exchangePairs;
    expect(Array.from(pairs.i)).toEqual([0, 1, 3, 4]);
    expect(Array.from(pairs.j)).toEqual([1, 2, 4, 5]);
    // Separation along x, field at 45 degrees in the xz plane: cos^2 = 1/2.
    for (const v of pairs.value) expect(v).toBeCloseTo(-0.5, 14);
    expect(model.hoppingBonds.count).toBe(4);
  });

  it('custom bonds replace the nearest ones and drop those touching a vacancy', () => {
    const model = buildModel(
      validateSpec({
        lattice: {
          shape: 'square',
          size: [2, 2],
          bonds: [
            [0, 3],
            [1, 2],
            [2, 3],
          ],
          vacancies: [2],
        },
        levels: { count: 2 },
        particles: { kind: 'fermion', number: 1, hopping: 0.5 },
      }),
    );
    expect(Array.from(model.hoppingBonds.i)).toEqual([0]);
    expect(Array.from(model.hoppingBonds.j)).toEqual([2]);
  });
});

describe('the geometry as check prints it', () => {
  it('lists sites with positions, bonds, and the distinct coupling values with their pair counts', () => {
    // 2x2 open square, field along z: four sides at distance 1 (1 - 0 = 1) and two diagonals at
    // sqrt 2 (1 / 2^(3/2)), by V (1 - 3 cos^2 theta) / r^3 with theta = 90 degrees.
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'square', size: [2, 2] },
        levels: { count: 2 },
        exchange: { strength: 2, range: 'dipolar' },
        particles: { kind: 'hardcore', number: 2, hopping: 1 },
      }),
    );
    const groups = distinctCouplings(model.exchangePairs);
    expect(groups.map((g) => g.pairs)).toEqual([4, 2]);
    expect(groups[0].value).toBe(2);
    expect(groups[1].value).toBeCloseTo(2 / 2 ** 1.5, 14);
    const text = describeGeometry(model).join('\n');
    expect(text).toContain('geometry: square, 4 sites, field [0, 0, 1]');
    expect(text).toMatch(/^3 +1 +1 +0$/m);
    expect(text).toContain('hopping bonds (nearest neighbours): 4: 0-1 0-2 1-3 2-3');
    expect(text).toContain('exchange V_ij: 6 coupled pairs, 2 distinct values');
    expect(text).toContain('diagonal term W_ij: no coupled pair');
  });
});
