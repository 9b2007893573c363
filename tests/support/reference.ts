// An independent, deliberately plain construction of the pinned Hamiltonian of docs/model.md as a dense
// matrix, element by element from the formula, for checking the fast kernels. Shares no code with
// src/ beyond the validated spec.

import { Matrix, EigenvalueDecomposition } from 'ml-matrix';
import type { Spec } from '../../src/spec/spec.js';

export interface DenseHermitian {
  dim: number;
  re: Matrix;
  im: Matrix;
}

function decode(index: number, L: number, N: number): number[] {
  const d: number[] = [];
  for (let i = 0; i < L; i++) {
    d.push(index % N);
    index = Math.floor(index / N);
  }
  return d;
}

function encode(d: number[], N: number): number {
  let s = 0;
  for (let i = d.length - 1; i >= 0; i--) s = s * N + d[i];
  return s;
}

function pairFactor(i: number, j: number, L: number, periodic: boolean, range: string, cutoff: number): number {
  let r = Math.abs(i - j);
  if (periodic) r = Math.min(r, L - r);
  if (range === 'nearest') return r === 1 ? 1 : 0;
  return r <= cutoff ? 1 / r ** 3 : 0;
}

export function densePinnedHamiltonian(spec: Spec): DenseHermitian {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  const periodic = spec.chain.boundary === 'periodic';
  const dim = N ** L;
  const re = Matrix.zeros(dim, dim);
  const im = Matrix.zeros(dim, dim);
  for (let s = 0; s < dim; s++) {
    const d = decode(s, L, N);
    // detuning and the diagonal dipole term
    let diag = 0;
    for (let i = 0; i < L; i++) diag += spec.levels.detuning[d[i]];
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++) {
        const f = pairFactor(i, j, L, periodic, spec.ising.range, spec.ising.cutoff);
        diag += spec.ising.strength * f * spec.ising.moments[d[i]] * spec.ising.moments[d[j]];
      }
    re.set(s, s, re.get(s, s) + diag);
    // tunnelling: -J e^{i phi} |n+1><n| + h.c. on each site
    for (let i = 0; i < L; i++) {
      spec.levels.tunnelling.forEach((J, l) => {
        const phi = spec.levels.phase[l];
        const lower = l;
        const upper = (l + 1) % N;
        if (d[i] === lower) {
          const e = [...d];
          e[i] = upper;
          const t = encode(e, N);
          re.set(t, s, re.get(t, s) - J * Math.cos(phi));
          im.set(t, s, im.get(t, s) - J * Math.sin(phi));
        }
        if (d[i] === upper) {
          const e = [...d];
          e[i] = lower;
          const t = encode(e, N);
          re.set(t, s, re.get(t, s) - J * Math.cos(phi));
          im.set(t, s, im.get(t, s) + J * Math.sin(phi));
        }
      });
    }
    // exchange: V_ij c_n (a+_{i,n+1} a_{i,n} a+_{j,n} a_{j,n+1} + h.c.)
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++) {
        const V = spec.exchange.strength * pairFactor(i, j, L, periodic, spec.exchange.range, spec.exchange.cutoff);
        if (V === 0) continue;
        for (let n = 0; n + 1 < N; n++) {
          const c = spec.exchange.weights[n];
          if (d[i] === n && d[j] === n + 1) {
            const e = [...d];
            e[i] = n + 1;
            e[j] = n;
            const t = encode(e, N);
            re.set(t, s, re.get(t, s) + V * c);
          }
          if (d[i] === n + 1 && d[j] === n) {
            const e = [...d];
            e[i] = n;
            e[j] = n + 1;
            const t = encode(e, N);
            re.set(t, s, re.get(t, s) + V * c);
          }
        }
      }
  }
  return { dim, re, im };
}

/**
 * The real symmetric matrix [[A, -B], [B, A]] of H = A + iB: it has H's spectrum with every value
 * twice, and an eigenvector (u; v) gives the eigenvector u + i v of H (standard real embedding of a
 * Hermitian matrix, Horn and Johnson, Matrix Analysis).
 */
export function realEmbedding(h: DenseHermitian): Matrix {
  const n = h.dim;
  const big = Matrix.zeros(2 * n, 2 * n);
  for (let r = 0; r < n; r++)
    for (let c = 0; c < n; c++) {
      big.set(r, c, h.re.get(r, c));
      big.set(r + n, c + n, h.re.get(r, c));
      big.set(r, c + n, -h.im.get(r, c));
      big.set(r + n, c, h.im.get(r, c));
    }
  return big;
}

/** All eigenvalues of a dense Hermitian matrix, ascending (a complex one via the real embedding [[A,-B],[B,A]]). */
export function denseSpectrum(h: DenseHermitian): number[] {
  // A real H needs no embedding (and the embedding costs eight times the time).
  let real = true;
  for (let r = 0; r < h.dim && real; r++)
    for (let c = 0; c < h.dim; c++)
      if (h.im.get(r, c) !== 0) {
        real = false;
        break;
      }
  if (real) return new EigenvalueDecomposition(h.re, { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
  const big = realEmbedding(h);
  const values = new EigenvalueDecomposition(big, { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
  // Each eigenvalue of the Hermitian matrix appears twice in the embedding.
  return values.filter((_, k) => k % 2 === 0);
}
