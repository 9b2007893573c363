import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { symmetricEigen } from '../../src/linalg/symmetricEigen.js';
import { rng } from '../support/random.js';

// References: ml-matrix's dense symmetric eigensolver (a general-purpose library); the closed-form
// eigenpairs of the second-difference matrix tridiag(-1, 2, -1): 2 - 2 cos(k pi / (n + 1)) with
// vectors sin(j k pi / (n + 1)), k = 1..n (a textbook result derived in numerical-analysis texts on
// the discrete Laplacian, e.g. LeVeque, Finite Difference Methods for ODEs and PDEs, 2007, ch. 2;
// the chapter from memory); and the defining properties A v = lambda v, V^T V = 1 (common practice).

function randomSymmetric(n: number, seed: number): Float64Array {
  const r = rng(seed);
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      const x = 2 * r() - 1;
      a[i * n + j] = x;
      a[j * n + i] = x;
    }
  }
  return a;
}

function maxAbs(a: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]));
  return m;
}

/** Largest |A v_k - lambda_k v_k| and |V^T V - 1| entry. */
function defects(
  a: Float64Array,
  n: number,
  values: Float64Array,
  vectors: Float64Array,
): { residual: number; orthogonality: number } {
  let residual = 0;
  let orthogonality = 0;
  for (let k = 0; k < n; k++) {
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += a[i * n + j] * vectors[k * n + j];
      residual = Math.max(residual, Math.abs(s - values[k] * vectors[k * n + i]));
    }
    for (let l = 0; l < n; l++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += vectors[k * n + i] * vectors[l * n + i];
      orthogonality = Math.max(orthogonality, Math.abs(s - (k === l ? 1 : 0)));
    }
  }
  return { residual, orthogonality };
}

describe('symmetricEigen', () => {
  it.each([1, 2, 3, 7, 24, 40, 81])('agrees with ml-matrix on a random symmetric %i x %i matrix', (n) => {
    const a = randomSymmetric(n, 100 + n);
    const { values, vectors } = symmetricEigen(a, n);
    const rows = Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, (i + 1) * n)));
    const reference = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true }).realEigenvalues.sort(
      (p, q) => p - q,
    );
    const scale = Math.max(1, maxAbs(values));
    for (let k = 0; k < n; k++) expect(Math.abs(values[k] - reference[k])).toBeLessThan(1e-13 * n * scale);
    const { residual, orthogonality } = defects(a, n, values, vectors!);
    expect(residual).toBeLessThan(1e-13 * n * scale);
    expect(orthogonality).toBeLessThan(1e-13 * n);
    for (let k = 1; k < n; k++) expect(values[k]).toBeGreaterThanOrEqual(values[k - 1]);
  });

  it('gives the closed-form spectrum of tridiag(-1, 2, -1)', () => {
    const n = 50;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      a[i * n + i] = 2;
      if (i + 1 < n) a[i * n + i + 1] = a[(i + 1) * n + i] = -1;
    }
    const { values, vectors } = symmetricEigen(a, n);
    for (let k = 1; k <= n; k++)
      expect(Math.abs(values[k - 1] - (2 - 2 * Math.cos((k * Math.PI) / (n + 1))))).toBeLessThan(1e-13);
    // Its eigenvectors are sin(j k pi / (n + 1)) up to sign, normalized by sqrt(2 / (n + 1)).
    const k = 3;
    const sign = Math.sign(vectors![(k - 1) * n]);
    for (let j = 1; j <= n; j++) {
      const expected = Math.sqrt(2 / (n + 1)) * Math.sin((j * k * Math.PI) / (n + 1));
      expect(Math.abs(sign * vectors![(k - 1) * n + j - 1] - expected)).toBeLessThan(1e-12);
    }
  });

  it('handles degenerate spectra, zero rows and already diagonal matrices', () => {
    // Identity plus a rank-one block: eigenvalue 1 four times, and 1 + 3 once (the all-ones 3 x 3
    // block has eigenvalues 3, 0, 0).
    const n = 6;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) a[i * n + i] = 1;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) a[i * n + j] += 1;
    a[5 * n + 5] = 0; // a zero row and column: eigenvalue 0
    const { values, vectors } = symmetricEigen(a, n);
    expect(Array.from(values).map((x) => Number(x.toFixed(12)))).toEqual([0, 1, 1, 1, 1, 4]);
    const { residual, orthogonality } = defects(a, n, values, vectors!);
    expect(residual).toBeLessThan(1e-14);
    expect(orthogonality).toBeLessThan(1e-14);

    const diagonal = Float64Array.from([3, 0, 0, 0, -2, 0, 0, 0, 5]);
    expect(Array.from(symmetricEigen(diagonal, 3).values)).toEqual([-2, 3, 5]);
    expect(symmetricEigen(new Float64Array(16), 4).values).toEqual(new Float64Array(4));
  });

  it('gives the same eigenvalues without vectors', () => {
    const n = 30;
    const a = randomSymmetric(n, 7);
    const full = symmetricEigen(a, n);
    const only = symmetricEigen(a, n, false);
    expect(only.vectors).toBeNull();
    // The values go through the very same operations with or without vectors: identical.
    expect(only.values).toEqual(full.values);
  });

  it('handles the empty matrix, and a badly scaled one', () => {
    expect(symmetricEigen(new Float64Array(0), 0)).toEqual({
      values: new Float64Array(0),
      vectors: new Float64Array(0),
    });
    // Eigenvalues 1e-150 and 1 in a rotated 2 x 2 block, beside a lone 1e150: squares of such
    // entries under- or overflow unless the reduction scales its rows. The blocks do not mix, so
    // each value must come back to rounding of its own block's norm: 1e150 relatively, the other
    // two to about eps (the backward-error bound eps ||A|| per block; common practice).
    const c = Math.cos(0.3);
    const sn = Math.sin(0.3);
    const q = [c, -sn, 0, sn, c, 0, 0, 0, 1]; // a rotation of the first two coordinates
    const d = [1e-150, 1, 1e150];
    const a = new Float64Array(9);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) a[i * 3 + j] += q[i * 3 + k] * d[k] * q[j * 3 + k];
    const { values } = symmetricEigen(a, 3);
    expect(Math.abs(values[2] - 1e150) / 1e150).toBeLessThan(1e-15);
    expect(Math.abs(values[1] - 1)).toBeLessThan(1e-15);
    expect(Math.abs(values[0] - 1e-150)).toBeLessThan(1e-15);
    expect(values.every(Number.isFinite)).toBe(true);
  });

  it('leaves its input alone and rejects a short array', () => {
    const a = randomSymmetric(5, 3);
    const copy = a.slice();
    symmetricEigen(a, 5);
    expect(a).toEqual(copy);
    expect(() => symmetricEigen(a, 6)).toThrow(RangeError);
  });
});
