// Dense eigen-decomposition of a real symmetric matrix in typed arrays: Householder reduction to
// tridiagonal form, then the implicit QL method with Wilkinson shifts (the EISPACK tred2/tql2 pair;
// Golub and Van Loan, Matrix Computations, 4th ed., sections 8.3.1 and 8.3.5).
//
// Every small eigenproblem of a solve goes through here: the Rayleigh-Ritz step of each Lanczos
// restart, dense solves of small spaces, reduced density matrices, Krylov time steps. Keeping it
// in flat typed arrays makes it cheaper than a general matrix library's (arrays of rows, method
// calls per entry), and keeps that library out of every worker thread's start-up.

import { ConvergenceError } from '../errors/errors.js';

export interface SymmetricEigen {
  /** Eigenvalues, ascending. */
  values: Float64Array;
  /** vectors[k * n + i]: component i of the unit eigenvector of values[k]; null when not asked for. */
  vectors: Float64Array | null;
}

/** QL sweeps allowed per eigenvalue before giving up (two or three are usual). */
const MAX_SWEEPS = 60;

/**
 * Eigenvalues (ascending) and, unless `wantVectors` is false, orthonormal eigenvectors of the
 * symmetric n x n matrix `a` (row-major, not modified; only its lower triangle and diagonal are
 * read, so callers symmetrize a matrix that is symmetric only up to rounding).
 */
export function symmetricEigen(a: Float64Array, n: number, wantVectors = true): SymmetricEigen {
  if (a.length < n * n) throw new RangeError(`symmetricEigen: ${a.length} entries for a ${n} x ${n} matrix`);
  const v = a.slice(0, n * n);
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  if (n > 0) householderTridiagonal(v, d, e, n);
  // The accumulated transformation, transposed so each QL rotation runs over two contiguous rows.
  const w = wantVectors ? transposed(v, n) : null;
  implicitQl(d, e, w, n);
  return sortAscending(d, w, n);
}

/**
 * Reduces v (row-major, symmetric) to tridiagonal form Q^T v Q: on return d holds the diagonal,
 * e[1..n) the subdiagonal (e[0] = 0) and v the orthogonal Q.
 */
function householderTridiagonal(v: Float64Array, d: Float64Array, e: Float64Array, n: number): void {
  for (let j = 0; j < n; j++) d[j] = v[(n - 1) * n + j];
  for (let i = n - 1; i > 0; i--) {
    // Scaling the row first avoids underflow and overflow in the norm.
    let scale = 0;
    let h = 0;
    for (let k = 0; k < i; k++) scale += Math.abs(d[k]);
    if (scale === 0) {
      e[i] = d[i - 1];
      for (let j = 0; j < i; j++) {
        d[j] = v[(i - 1) * n + j];
        v[i * n + j] = 0;
        v[j * n + i] = 0;
      }
    } else {
      for (let k = 0; k < i; k++) {
        d[k] /= scale;
        h += d[k] * d[k];
      }
      let f = d[i - 1];
      let g = Math.sqrt(h);
      if (f > 0) g = -g;
      e[i] = scale * g;
      h -= f * g;
      d[i - 1] = f - g;
      for (let j = 0; j < i; j++) e[j] = 0;
      for (let j = 0; j < i; j++) {
        f = d[j];
        v[j * n + i] = f;
        g = e[j] + v[j * n + j] * f;
        for (let k = j + 1; k <= i - 1; k++) {
          g += v[k * n + j] * d[k];
          e[k] += v[k * n + j] * f;
        }
        e[j] = g;
      }
      f = 0;
      for (let j = 0; j < i; j++) {
        e[j] /= h;
        f += e[j] * d[j];
      }
      const hh = f / (h + h);
      for (let j = 0; j < i; j++) e[j] -= hh * d[j];
      for (let j = 0; j < i; j++) {
        f = d[j];
        g = e[j];
        for (let k = j; k <= i - 1; k++) v[k * n + j] -= f * e[k] + g * d[k];
        d[j] = v[(i - 1) * n + j];
        v[i * n + j] = 0;
      }
    }
    d[i] = h;
  }
  // Accumulate the reflections into Q.
  for (let i = 0; i < n - 1; i++) {
    v[(n - 1) * n + i] = v[i * n + i];
    v[i * n + i] = 1;
    const h = d[i + 1];
    if (h !== 0) {
      for (let k = 0; k <= i; k++) d[k] = v[k * n + i + 1] / h;
      for (let j = 0; j <= i; j++) {
        let g = 0;
        for (let k = 0; k <= i; k++) g += v[k * n + i + 1] * v[k * n + j];
        for (let k = 0; k <= i; k++) v[k * n + j] -= g * d[k];
      }
    }
    for (let k = 0; k <= i; k++) v[k * n + i + 1] = 0;
  }
  for (let j = 0; j < n; j++) {
    d[j] = v[(n - 1) * n + j];
    v[(n - 1) * n + j] = 0;
  }
  v[n * n - 1] = 1;
  e[0] = 0;
}

function transposed(v: Float64Array, n: number): Float64Array {
  const w = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) w[k * n + i] = v[i * n + k];
  return w;
}

/**
 * Diagonalizes the tridiagonal (d, e[1..n)) in place: d becomes the eigenvalues. When w is given
 * (rows: the columns of the reducing Q), the same rotations turn its rows into the eigenvectors.
 */
function implicitQl(d: Float64Array, e: Float64Array, w: Float64Array | null, n: number, width = n): void {
  for (let i = 1; i < n; i++) e[i - 1] = e[i];
  if (n > 0) e[n - 1] = 0;
  let shift = 0;
  let norm = 0;
  const eps = Number.EPSILON;
  for (let l = 0; l < n; l++) {
    norm = Math.max(norm, Math.abs(d[l]) + Math.abs(e[l]));
    // The first negligible subdiagonal entry at or below l splits the matrix there.
    let m = l;
    while (m < n - 1 && Math.abs(e[m]) > eps * norm) m++;
    let sweeps = 0;
    while (m > l && Math.abs(e[l]) > eps * norm) {
      if (++sweeps > MAX_SWEEPS)
        throw new ConvergenceError(`dense symmetric eigensolver: no convergence after ${MAX_SWEEPS} QL sweeps`);
      // Wilkinson shift from the leading 2 x 2 block.
      let g = d[l];
      let p = (d[l + 1] - g) / (2 * e[l]);
      let r = Math.hypot(p, 1);
      if (p < 0) r = -r;
      d[l] = e[l] / (p + r);
      d[l + 1] = e[l] * (p + r);
      const dl1 = d[l + 1];
      let h = g - d[l];
      for (let i = l + 2; i < n; i++) d[i] -= h;
      shift += h;
      // Chase the bulge from m up to l with plane rotations.
      p = d[m];
      let c = 1;
      let c2 = 1;
      let c3 = 1;
      const el1 = e[l + 1];
      let s = 0;
      let s2 = 0;
      for (let i = m - 1; i >= l; i--) {
        c3 = c2;
        c2 = c;
        s2 = s;
        g = c * e[i];
        h = c * p;
        r = Math.hypot(p, e[i]);
        e[i + 1] = s * r;
        s = e[i] / r;
        c = p / r;
        p = c * d[i] - s * g;
        d[i + 1] = h + s * (c * g + s * d[i]);
        if (w) {
          const lo = i * width;
          const hi = lo + width;
          for (let k = 0; k < width; k++) {
            const upper = w[hi + k];
            const lower = w[lo + k];
            w[hi + k] = s * lower + c * upper;
            w[lo + k] = c * lower - s * upper;
          }
        }
      }
      p = (-s * s2 * c3 * el1 * e[l]) / dl1;
      e[l] = s * p;
      d[l] = c * p;
      // The subdiagonal below l may have become negligible further up; look again.
      m = l;
      while (m < n - 1 && Math.abs(e[m]) > eps * norm) m++;
    }
    d[l] += shift;
    e[l] = 0;
  }
}

/**
 * Eigenvalues (ascending) of the symmetric tridiagonal matrix with `diagonal` (n) and
 * `offDiagonal` (n - 1), and the first and last components of each unit eigenvector: the Gauss
 * quadrature of a Lanczos run (Golub and Welsch, Math. Comp. 23, 221 (1969)) and the Ritz
 * residuals b_n |u_(n-1)j| (Paige). Only those two rows of the eigenvector matrix are rotated, so
 * this costs O(n^2) rather than O(n^3).
 */
export function tridiagonalEigen(
  diagonal: ArrayLike<number>,
  offDiagonal: ArrayLike<number>,
): { values: Float64Array; firstComponents: Float64Array; lastComponents: Float64Array } {
  const n = diagonal.length;
  const d = Float64Array.from(diagonal);
  const e = new Float64Array(n);
  for (let i = 1; i < n; i++) e[i] = offDiagonal[i - 1];
  // Row i of w holds components 0 and n-1 of eigenvector i: the identity's first and last columns to start.
  const w = new Float64Array(2 * n);
  if (n > 0) {
    w[0] = 1;
    w[2 * (n - 1) + 1] = 1;
  }
  implicitQl(d, e, w, n, 2);
  const order = Array.from({ length: n }, (_, i) => i).sort((p, q) => d[p] - d[q]);
  return {
    values: Float64Array.from(order, (k) => d[k]),
    firstComponents: Float64Array.from(order, (k) => w[2 * k]),
    lastComponents: Float64Array.from(order, (k) => w[2 * k + 1]),
  };
}

function sortAscending(d: Float64Array, w: Float64Array | null, n: number): SymmetricEigen {
  const order = Array.from({ length: n }, (_, i) => i).sort((p, q) => d[p] - d[q]);
  const values = new Float64Array(n);
  const vectors = w ? new Float64Array(n * n) : null;
  for (let k = 0; k < n; k++) {
    values[k] = d[order[k]];
    if (vectors) vectors.set(w!.subarray(order[k] * n, order[k] * n + n), k * n);
  }
  return { values, vectors };
}
