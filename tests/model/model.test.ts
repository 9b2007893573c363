// The spec resolved to numbers, checked against the formulas of docs/model.md written out here.
import { describe, expect, it } from 'vitest';
import { buildModel, pairCouplings, siteDistance, type PairList } from '../../src/model/model.js';
import { validateSpec } from '../../src/spec/spec.js';

/** The pairs of a list as [i, j, value] triples, sorted, so tests compare them as a set. */
function triples(list: PairList): [number, number, number][] {
  const out: [number, number, number][] = [];
  for (let k = 0; k < list.count; k++) out.push([list.i[k], list.j[k], list.value[k]]);
  return out.sort((a, b) => a[0] - b[0] || a[1] - b[1]);
}

/** Every pair i < j with the coupling strength * f(r) of docs/model.md, r the minimum image on a ring. */
function expectedPairs(
  sites: number,
  periodic: boolean,
  strength: number,
  f: (r: number) => number,
): [number, number, number][] {
  const out: [number, number, number][] = [];
  for (let i = 0; i < sites; i++) {
    for (let j = i + 1; j < sites; j++) {
      const r = periodic ? Math.min(j - i, sites - (j - i)) : j - i;
      if (f(r) !== 0) out.push([i, j, strength * f(r)]);
    }
  }
  return out;
}

function expectPairsClose(actual: [number, number, number][], expected: [number, number, number][]): void {
  expect(actual.map(([i, j]) => [i, j])).toEqual(expected.map(([i, j]) => [i, j]));
  actual.forEach(([, , v], k) => expect(v).toBeCloseTo(expected[k][2], 14));
}

describe('site distances', () => {
  it('are |i - j| on an open chain and the shorter way round on a ring (minimum image)', () => {
    expect(siteDistance(0, 7, 8, false)).toBe(7);
    expect(siteDistance(0, 7, 8, true)).toBe(1);
    expect(siteDistance(1, 6, 8, true)).toBe(3);
    expect(siteDistance(0, 4, 8, true)).toBe(4);
    expect(siteDistance(5, 2, 8, true)).toBe(3);
  });
});

describe('pair couplings V_ij = V f(r_ij)', () => {
  it('"nearest": f = 1 at r = 1 only, the closing bond too on a ring', () => {
    const nearest = (r: number) => (r === 1 ? 1 : 0);
    expectPairsClose(triples(pairCouplings(5, false, 1.5, 'nearest', Infinity)), expectedPairs(5, false, 1.5, nearest));
    const ring = triples(pairCouplings(5, true, 1.5, 'nearest', Infinity));
    expectPairsClose(ring, expectedPairs(5, true, 1.5, nearest));
    expect(ring).toHaveLength(5);
    expect(ring).toContainEqual([0, 4, 1.5]);
  });

  it('"dipolar": f = 1/r^3 for every pair, with the minimum image on a ring', () => {
    const dipolar = (r: number) => 1 / r ** 3;
    const open = triples(pairCouplings(6, false, 2, 'dipolar', Infinity));
    expectPairsClose(open, expectedPairs(6, false, 2, dipolar));
    expect(open).toHaveLength(15);
    const ring = triples(pairCouplings(6, true, 2, 'dipolar', Infinity));
    expectPairsClose(ring, expectedPairs(6, true, 2, dipolar));
    // Sites 0 and 5 are neighbours through the closing bond; 0 and 3 are 3 apart either way.
    expect(ring.find(([i, j]) => i === 0 && j === 5)![2]).toBeCloseTo(2, 14);
    expect(ring.find(([i, j]) => i === 0 && j === 3)![2]).toBeCloseTo(2 / 27, 14);
  });

  it('"dipolar" with a cutoff keeps the pairs up to the cutoff only', () => {
    const cut = (r: number) => (r <= 2 ? 1 / r ** 3 : 0);
    const ring = triples(pairCouplings(6, true, 1, 'dipolar', 2));
    expectPairsClose(ring, expectedPairs(6, true, 1, cut));
    // 15 pairs on a ring of 6, of which 3 (the opposite sites) lie 3 apart.
    expect(ring).toHaveLength(12);
  });

  it('no pairs at zero strength', () => {
    expect(pairCouplings(6, true, 0, 'dipolar', Infinity).count).toBe(0);
  });
});

/** P_n(x) by Bonnet's recursion (n+1) P_{n+1} = (2n+1) x P_n - n P_{n-1} (textbook). */
function legendre(n: number, x: number): number {
  let previous = 1;
  let current = x;
  if (n === 0) return previous;
  for (let k = 1; k < n; k++) [previous, current] = [current, ((2 * k + 1) * x * current - k * previous) / (k + 1)];
  return current;
}

/**
 * <n+1, M=0| cos(theta) |n, M=0> of a rigid rotor, integrated numerically over the normalised
 * spherical harmonics Y_n0 = sqrt((2n+1)/(4 pi)) P_n(cos theta): composite Simpson on x = cos theta
 * (error of order h^4, below 1e-13 here for these low-degree polynomials).
 */
function rotorDipole(n: number): number {
  const steps = 20_000;
  const h = 2 / steps;
  let sum = 0;
  for (let k = 0; k <= steps; k++) {
    const x = -1 + k * h;
    const w = k === 0 || k === steps ? 1 : k % 2 === 1 ? 4 : 2;
    sum += w * legendre(n + 1, x) * x * legendre(n, x);
  }
  return ((Math.sqrt((2 * n + 1) * (2 * n + 3)) / 2) * sum * h) / 3;
}

const spec = (raw: Record<string, unknown>) => validateSpec(structuredClone(raw));

describe('buildModel', () => {
  it('the level Hamiltonian: <l+1|h|l> = -J_l e^{i phi_l}, its conjugate above the diagonal, detuning on it', () => {
    const model = buildModel(
      spec({
        chain: { sites: 2 },
        levels: { count: 3, tunnelling: [1, 0.5], phase: [0.3, 0], detuning: [0, 0.2, -0.1] },
      }),
    );
    const N = 3;
    const at = (row: number, col: number) => [model.localRe[row * N + col], model.localIm[row * N + col]];
    expect(at(1, 0)[0]).toBeCloseTo(-Math.cos(0.3), 15);
    expect(at(1, 0)[1]).toBeCloseTo(-Math.sin(0.3), 15);
    expect(at(0, 1)[0]).toBeCloseTo(-Math.cos(0.3), 15);
    expect(at(0, 1)[1]).toBeCloseTo(Math.sin(0.3), 15);
    expect(at(2, 1)).toEqual([-0.5, 0]);
    expect(at(1, 2)).toEqual([-0.5, 0]);
    expect(at(2, 0)).toEqual([0, 0]);
    expect([at(0, 0)[0], at(1, 1)[0], at(2, 2)[0]]).toEqual([0, 0.2, -0.1]);
    expect(model.isComplex).toBe(true);
  });

  it('a ring of levels adds the closing link N-1 -> 0; a phase of pi leaves the model real', () => {
    const model = buildModel(
      spec({ chain: { sites: 2 }, levels: { count: 3, boundary: 'ring', tunnelling: 1, phase: Math.PI } }),
    );
    // e^{i pi} = -1: every link element is +J.
    expect(model.localRe[0 * 3 + 2]).toBeCloseTo(1, 15);
    expect(model.localRe[2 * 3 + 0]).toBeCloseTo(1, 15);
    expect(model.isComplex).toBe(false);
    // Exchange never crosses the closing link: N-1 weights.
    expect(model.exchangeWeights).toHaveLength(2);
  });

  it('rotor exchange weights are the squared rigid-rotor dipole matrix elements relative to the lowest link', () => {
    const model = buildModel(spec({ chain: { sites: 2 }, levels: { count: 6 }, exchange: { weights: 'rotor' } }));
    const lowest = rotorDipole(0) ** 2;
    // The integral agrees with the handbook closed form of the rigid rotor's direction-cosine matrix
    // element, (J+1)/sqrt((2J+1)(2J+3)) (angular-momentum algebra, e.g. Zare, Angular Momentum, 1988).
    expect(rotorDipole(0)).toBeCloseTo(1 / Math.sqrt(3), 11);
    expect(rotorDipole(2)).toBeCloseTo(3 / Math.sqrt(35), 11);
    expect(model.exchangeWeights).toHaveLength(5);
    model.exchangeWeights.forEach((c, n) => expect(c).toBeCloseTo(rotorDipole(n) ** 2 / lowest, 11));
  });

  it('exchange and the diagonal dipole term each take their own range: ising stays nearest when exchange is dipolar', () => {
    const model = buildModel(
      spec({
        chain: { sites: 5, boundary: 'periodic' },
        levels: { count: 2 },
        exchange: { strength: 3, range: 'dipolar' },
        ising: { strength: 0.5, moments: [1, -1] },
      }),
    );
    expectPairsClose(
      triples(model.exchangePairs),
      expectedPairs(5, true, 3, (r) => 1 / r ** 3),
    );
    expectPairsClose(
      triples(model.isingPairs),
      expectedPairs(5, true, 0.5, (r) => (r === 1 ? 1 : 0)),
    );
    expect([...model.moments]).toEqual([1, -1]);
  });

  it('hopping bonds: none for pinned molecules; the nearest-neighbour bonds, (0, L-1) on a ring, for itinerant kinds', () => {
    const chain = { sites: 4, boundary: 'periodic' };
    const levels = { count: 2 };
    expect(buildModel(spec({ chain, levels })).hoppingBonds.count).toBe(0);
    const itinerant = buildModel(
      spec({ chain, levels, particles: { kind: 'hardcore', number: 2, hopping: 0.7 } }),
    ).hoppingBonds;
    expect(triples(itinerant)).toEqual([
      [0, 1, 0.7],
      [0, 3, 0.7],
      [1, 2, 0.7],
      [2, 3, 0.7],
    ]);
    const open = buildModel(
      spec({ chain: { sites: 4 }, levels, particles: { kind: 'hardcore', number: 2, hopping: 0.7 } }),
    ).hoppingBonds;
    expect(triples(open).map(([i, j]) => [i, j])).toEqual([
      [0, 1],
      [1, 2],
      [2, 3],
    ]);
  });
});
