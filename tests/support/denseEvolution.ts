// Dense time evolution for checking the Krylov propagator: exp(-i H t) from ml-matrix's symmetric
// eigendecomposition of the real embedding M = [[A, -B], [B, A]] of H = A + iB. A complex vector
// x + iy is [x; y] in the embedding, M commutes with the complex structure, so
// exp(-i H t) z <-> cos(M t) u + R sin(M t) u with R [x; y] = [y; -x] (multiplication by -i).

import { EigenvalueDecomposition } from 'ml-matrix';
import { realEmbedding, type DenseHermitian } from './reference.js';

export interface DenseEvolver {
  dim: number;
  /** exp(-i H t) applied to an interleaved complex vector. */
  evolve(psi: Float64Array, t: number): Float64Array;
  /** <psi|H|psi> for an interleaved complex vector. */
  energy(psi: Float64Array): number;
  /** Largest |eigenvalue| of H. */
  normH: number;
  /** Ground states spanning the lowest eigenvalue (complex interleaved) and that eigenvalue. */
  groundSpace(): { energy: number; vectors: Float64Array[] };
}

export function denseEvolver(h: DenseHermitian): DenseEvolver {
  const n = h.dim;
  const M = realEmbedding(h);
  const eig = new EigenvalueDecomposition(M, { assumeSymmetric: true });
  const lambda = eig.realEigenvalues;
  const Q = eig.eigenvectorMatrix;
  const toEmbedded = (psi: Float64Array): number[] => {
    const u = new Array<number>(2 * n);
    for (let s = 0; s < n; s++) {
      u[s] = psi[2 * s];
      u[s + n] = psi[2 * s + 1];
    }
    return u;
  };
  return {
    dim: n,
    normH: Math.max(...lambda.map(Math.abs)),
    evolve(psi, t) {
      const u = toEmbedded(psi);
      // coefficients along eigenvectors
      const coef = new Array<number>(2 * n).fill(0);
      for (let k = 0; k < 2 * n; k++) {
        let s = 0;
        for (let r = 0; r < 2 * n; r++) s += Q.get(r, k) * u[r];
        coef[k] = s;
      }
      const cosPart = new Array<number>(2 * n).fill(0);
      const sinPart = new Array<number>(2 * n).fill(0);
      for (let k = 0; k < 2 * n; k++) {
        const c = Math.cos(lambda[k] * t) * coef[k];
        const sn = Math.sin(lambda[k] * t) * coef[k];
        for (let r = 0; r < 2 * n; r++) {
          cosPart[r] += Q.get(r, k) * c;
          sinPart[r] += Q.get(r, k) * sn;
        }
      }
      const out = new Float64Array(2 * n);
      for (let s = 0; s < n; s++) {
        // cos part + R sin part, R[x; y] = [y; -x]
        out[2 * s] = cosPart[s] + sinPart[s + n];
        out[2 * s + 1] = cosPart[s + n] - sinPart[s];
      }
      return out;
    },
    energy(psi) {
      const u = toEmbedded(psi);
      let e = 0;
      for (let r = 0; r < 2 * n; r++) {
        let s = 0;
        for (let c = 0; c < 2 * n; c++) s += M.get(r, c) * u[c];
        e += u[r] * s;
      }
      return e;
    },
    groundSpace() {
      const order = lambda.map((l, k) => [l, k]).sort((a, b) => a[0] - b[0]);
      const e0 = order[0][0];
      // Each level appears twice in the embedding (v and its image under the complex structure);
      // [x; y] as x + iy gives the complex eigenvectors, with each complex direction twice.
      const candidates: Float64Array[] = [];
      for (const [l, k] of order) {
        if (l - e0 > 1e-9) break;
        const v = new Float64Array(2 * n);
        for (let s = 0; s < n; s++) {
          v[2 * s] = Q.get(s, k);
          v[2 * s + 1] = Q.get(s + n, k);
        }
        candidates.push(v);
      }
      // Orthonormalize over the complex numbers, dropping the duplicate directions.
      const basis: Float64Array[] = [];
      for (const v of candidates) {
        const w = Float64Array.from(v);
        for (const b of basis) {
          let re = 0;
          let im = 0;
          for (let t = 0; t < w.length; t += 2) {
            re += b[t] * w[t] + b[t + 1] * w[t + 1];
            im += b[t] * w[t + 1] - b[t + 1] * w[t];
          }
          for (let t = 0; t < w.length; t += 2) {
            w[t] -= re * b[t] - im * b[t + 1];
            w[t + 1] -= re * b[t + 1] + im * b[t];
          }
        }
        let norm = 0;
        for (let t = 0; t < w.length; t++) norm += w[t] * w[t];
        norm = Math.sqrt(norm);
        if (norm > 1e-6) {
          for (let t = 0; t < w.length; t++) w[t] /= norm;
          basis.push(w);
        }
      }
      return { energy: e0, vectors: basis };
    },
  };
}

export function complexDistance(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let k = 0; k < a.length; k++) s += (a[k] - b[k]) ** 2;
  return Math.sqrt(s);
}

export function complexOverlapSquared(a: Float64Array, b: Float64Array): number {
  let re = 0;
  let im = 0;
  for (let t = 0; t < a.length; t += 2) {
    re += a[t] * b[t] + a[t + 1] * b[t + 1];
    im += a[t] * b[t + 1] - a[t + 1] * b[t];
  }
  return re * re + im * im;
}
