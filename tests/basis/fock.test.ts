import { describe, expect, it } from 'vitest';
import { basisDimension } from '../../src/basis/basis.js';
import { FockBasis, fockDimension, type ItinerantKind } from '../../src/basis/fock.js';
import { buildModel } from '../../src/model/model.js';
import { validateSpec } from '../../src/spec/spec.js';
import { enumerateStates, key } from '../support/fockReference.js';

// Binomial coefficient by Pascal's rule, written independently of src/.
function choose(n: number, k: number): number {
  if (k < 0 || k > n) return 0;
  const row = [1];
  for (let m = 1; m <= n; m++) {
    for (let j = m; j >= 1; j--) row[j] = (row[j] ?? 0) + row[j - 1];
  }
  return row[k];
}

function spec(kind: ItinerantKind, L: number, N: number, Np: number, K?: number) {
  const particles: Record<string, unknown> = { kind, number: Np };
  if (K !== undefined) particles.max_per_site = K;
  return validateSpec({ chain: { sites: L }, levels: { count: N }, particles });
}

describe('Fock basis dimensions against closed-form counts', () => {
  // Hard-core: choose the occupied sites, then a level for each particle: C(L, Np) N^Np (elementary counting).
  it.each([
    [12, 3, 6, 673596],
    [5, 2, 3, choose(5, 3) * 8],
    [7, 4, 2, choose(7, 2) * 16],
  ])('hardcore L=%i N=%i Np=%i: C(L,Np) N^Np = %i', (L, N, Np, expected) => {
    expect(fockDimension('hardcore', L, N, Np, 1)).toBe(expected);
    expect(expected).toBe(choose(L, Np) * N ** Np);
  });

  // Fermions: choose Np of the L N modes, C(LN, Np) (elementary counting).
  it.each([
    [4, 2, 3],
    [6, 3, 7],
    [10, 1, 5],
  ])('fermion L=%i N=%i Np=%i: C(LN, Np)', (L, N, Np) => {
    expect(fockDimension('fermion', L, N, Np, N)).toBe(choose(L * N, Np));
  });

  // Unbounded bosons (max_per_site >= Np): stars and bars, C(Np + LN - 1, Np), the Bose-Einstein count
  // of Feller, An Introduction to Probability Theory and Its Applications, vol. 1, ch. II (from memory).
  it.each([
    [3, 2, 4],
    [5, 3, 3],
    [8, 1, 8],
  ])('boson L=%i N=%i Np=%i without a bound: C(Np+LN-1, Np)', (L, N, Np) => {
    expect(fockDimension('boson', L, N, Np, Np)).toBe(choose(Np + L * N - 1, Np));
  });

  // One level, at most K per site: compositions of Np into L parts bounded by K, by inclusion and
  // exclusion over the sites that overflow, sum_k (-1)^k C(L,k) C(Np - k(K+1) + L - 1, L - 1) (common practice).
  it.each([
    [6, 8, 2],
    [5, 7, 3],
    [10, 10, 1],
    [4, 9, 3],
  ])('boson L=%i Np=%i K=%i, one level: bounded compositions by inclusion-exclusion', (L, Np, K) => {
    let expected = 0;
    for (let k = 0; k <= L; k++) {
      const rest = Np - k * (K + 1);
      if (rest < 0) break;
      expected += (-1) ** k * choose(L, k) * choose(rest + L - 1, L - 1);
    }
    expect(fockDimension('boson', L, 1, Np, K)).toBe(expected);
  });

  // Several levels with a bound per site: brute-force enumeration of all occupation lists.
  it.each([
    ['boson', 3, 2, 4, 2],
    ['boson', 4, 3, 3, 2],
    ['hardcore', 4, 3, 2, undefined],
    ['fermion', 3, 3, 4, undefined],
  ] as const)('%s L=%i N=%i Np=%i K=%s: equals brute-force enumeration', (kind, L, N, Np, K) => {
    const s = spec(kind, L, N, Np, K);
    const model = buildModel(s);
    expect(basisDimension(model)).toBe(enumerateStates(s).length);
  });
});

describe('Fock basis ranking', () => {
  const cases = [
    ['hardcore', 5, 3, 3, undefined],
    ['fermion', 4, 3, 5, undefined],
    ['boson', 4, 2, 5, 3],
    ['boson', 3, 3, 4, 4],
    ['fermion', 3, 2, 1, undefined],
    ['hardcore', 3, 2, 3, undefined],
  ] as const;
  for (const [kind, L, N, Np, K] of cases) {
    it(`${kind} L=${L} N=${N} Np=${Np}: the cursor visits every allowed state once, in rank order`, () => {
      const s = spec(kind, L, N, Np, K);
      const basis = new FockBasis(kind, L, N, Np, s.particles.maxPerSite);
      const expected = new Set(enumerateStates(s).map(key));
      expect(basis.dim).toBe(expected.size);
      const seen = new Set<string>();
      const cursor = basis.cursor();
      const occ = new Int32Array(L * N);
      const back = new Int32Array(L);
      let visited = 0;
      do {
        expect(cursor.index).toBe(visited);
        expect(basis.rank(cursor.state)).toBe(visited);
        basis.unrank(visited, back);
        expect(Array.from(back)).toEqual(Array.from(cursor.state));
        let P = 0;
        for (let i = 0; i < L; i++) {
          expect(cursor.prefix[i]).toBe(P);
          P += basis.local.count[cursor.state[i]];
        }
        expect(P).toBe(Np);
        basis.modeOccupations(cursor.state, occ);
        const k = key(Array.from(occ));
        expect(expected.has(k)).toBe(true);
        expect(seen.has(k)).toBe(false);
        seen.add(k);
        visited++;
      } while (cursor.next());
      expect(visited).toBe(basis.dim);
    });
  }
});
