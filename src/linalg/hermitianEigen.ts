// Dense Hermitian eigenproblems through the real symmetric embedding: R + iI is Hermitian iff
// S = [[R, -I], [I, R]] is real symmetric, and S (x; y) = E (x; y) exactly when
// (R + iI)(x + iy) = E (x + iy); each eigenvalue of R + iI appears twice in S (common practice).

import { symmetricEigen, type SymmetricEigen } from './symmetricEigen.js';

/** The 2n x 2n real symmetric embedding [[re, -im], [im, re]] of the n x n matrix re + i im (row-major). */
export function realEmbedding(re: Float64Array, im: Float64Array, n: number): Float64Array {
  const size = 2 * n;
  const embedded = new Float64Array(size * size);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const x = re[i * n + j];
      const y = im[i * n + j];
      embedded[i * size + j] = x;
      embedded[i * size + n + j] = -y;
      embedded[(n + i) * size + j] = y;
      embedded[(n + i) * size + n + j] = x;
    }
  }
  return embedded;
}

/**
 * Eigen-decomposition (ascending) of the real form of re + i im: of re itself when im is null
 * (size n), else of its embedding (size 2n, every eigenvalue twice; vector k holds x in its
 * first n components and y in its last n for the complex eigenvector x + iy).
 */
export function realFormEigen(
  re: Float64Array,
  im: Float64Array | null,
  n: number,
  wantVectors = true,
): SymmetricEigen & { size: number } {
  if (im === null) return { ...symmetricEigen(re, n, wantVectors), size: n };
  const size = 2 * n;
  return { ...symmetricEigen(realEmbedding(re, im, n), size, wantVectors), size };
}

/** Eigenvalues (ascending, each once) of the Hermitian n x n matrix re + i im (row-major). */
export function hermitianEigenvalues(re: Float64Array, im: Float64Array | null, n: number): Float64Array {
  const { values } = realFormEigen(re, im, n, false);
  if (im === null) return values;
  const once = new Float64Array(n);
  for (let k = 0; k < n; k++) once[k] = 0.5 * (values[2 * k] + values[2 * k + 1]);
  return once;
}

/** ||H v_k - e_k v_k|| for H = a + i b (b null: real) and vectors interleaved (re, im) when complex. */
export function denseResidualNorms(
  a: Float64Array,
  b: Float64Array | null,
  n: number,
  values: Float64Array,
  vectors: Float64Array[],
): Float64Array {
  const residuals = new Float64Array(vectors.length);
  for (let k = 0; k < vectors.length; k++) {
    const v = vectors[k];
    const e = values[k];
    let sum = 0;
    for (let i = 0; i < n; i++) {
      if (b) {
        let rr = 0;
        let ri = 0;
        for (let j = 0; j < n; j++) {
          const aij = a[i * n + j];
          const bij = b[i * n + j];
          const xr = v[2 * j];
          const xi = v[2 * j + 1];
          rr += aij * xr - bij * xi;
          ri += bij * xr + aij * xi;
        }
        rr -= e * v[2 * i];
        ri -= e * v[2 * i + 1];
        sum += rr * rr + ri * ri;
      } else {
        let r = 0;
        for (let j = 0; j < n; j++) r += a[i * n + j] * v[j];
        r -= e * v[i];
        sum += r * r;
      }
    }
    residuals[k] = Math.sqrt(sum);
  }
  return residuals;
}
