import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import type { HermitianOperator } from '../../src/operator/hermitian.js';
import { VectorArena } from '../../src/simd/arena.js';
import { lowestEigenpairs } from '../../src/solver/eigensolver.js';
import { rng } from '../support/random.js';

/** A dense random real symmetric operator (only its product is seen by the solver). */
function randomSymmetric(dim: number, seed: number): { op: HermitianOperator; dense: number[][] } {
  const r = rng(seed);
  const dense = Array.from({ length: dim }, () => new Array<number>(dim).fill(0));
  for (let i = 0; i < dim; i++) {
    for (let j = 0; j <= i; j++) dense[i][j] = dense[j][i] = r() - 0.5;
  }
  const flat = Float64Array.from(dense.flat());
  const op: HermitianOperator = {
    dim,
    isComplex: false,
    apply(x, y) {
      for (let i = 0; i < dim; i++) {
        let s = 0;
        for (let j = 0; j < dim; j++) s += flat[i * dim + j] * x[j];
        y[i] = s;
      }
    },
  };
  return { op, dense };
}

describe('arena reuse between solves (acquire / recycle)', () => {
  it('a recycled arena comes back on the same thread, and its reused vectors start at zero', () => {
    const first = VectorArena.acquire();
    if (!first) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
    const dirty = first.vector(1001);
    new Float64Array(dirty.buffer, dirty.byteOffset, 1002).fill(7); // padding included
    first.recycle();
    const again = VectorArena.acquire();
    expect(again).toBe(first);
    const v = again!.vector(1001);
    expect(v.every((x) => x === 0)).toBe(true);
    // The padding double the SIMD loops read is cleared too.
    expect(new Float64Array(v.buffer, v.byteOffset, 1002)[1001]).toBe(0);
    // Arrays for builders start at zero too: a builder may write only its nonzero parts.
    again!.release(0);
    expect(again!.float64Array(1002)!.every((x) => x === 0)).toBe(true);
    again!.release(0);
    expect(again!.int32Array(2004)!.every((x) => x === 0)).toBe(true);
    // While it is held, another acquire gets a different arena.
    const other = VectorArena.acquire();
    expect(other).not.toBe(again);
    other!.recycle();
    again!.recycle();
  });

  it('a second solve reusing the arena leaves the first solve’s eigenvectors untouched', () => {
    // Reference: ml-matrix's dense symmetric eigensolver (a general-purpose library).
    const dim = 500; // above the dense threshold, so Lanczos runs with its basis in an arena
    const a = randomSymmetric(dim, 11);
    const b = randomSymmetric(dim, 12);
    const options = { states: 2, tolerance: 1e-10, denseThreshold: 100 };
    const ra = lowestEigenpairs(a.op, options);
    const kept = ra.vectors.map((v) => Float64Array.from(v));
    const rb = lowestEigenpairs(b.op, options);
    expect(ra.method).toBe('lanczos');
    expect(rb.method).toBe('lanczos');
    ra.vectors.forEach((v, k) => expect(Array.from(v)).toEqual(Array.from(kept[k])));
    for (const [result, dense] of [
      [ra, a.dense],
      [rb, b.dense],
    ] as const) {
      const exact = new EigenvalueDecomposition(new Matrix(dense), { assumeSymmetric: true }).realEigenvalues.sort(
        (x, y) => x - y,
      );
      expect(result.values[0]).toBeCloseTo(exact[0], 9);
      expect(result.values[1]).toBeCloseTo(exact[1], 9);
    }
  });
});
