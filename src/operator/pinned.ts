// The pinned Hamiltonian as strided block loops over the mixed-radix index.

import type { PinnedBasis } from '../basis.js';
import type { Model } from '../model.js';
import type { HermitianOperator } from '../operator.js';

/**
 * The pinned Hamiltonian applied on the fly. Every term acts on one or two digits of the
 * mixed-radix index, so it is applied by strided block loops over the vector: no matrix is
 * stored, only the diagonal, and the inner loops run over contiguous memory.
 */
export class PinnedOperator implements HermitianOperator {
  readonly dim: number;
  readonly isComplex: boolean;
  /** Diagonal: detuning plus the diagonal dipole term. */
  readonly diagonal: Float64Array;
  private readonly N: number;
  private readonly strides: Int32Array;
  // Off-diagonal entries of one particle's h: y[a] += h_ab x[b].
  private readonly localTo: Int32Array;
  private readonly localFrom: Int32Array;
  private readonly localRe: Float64Array;
  private readonly localIm: Float64Array;
  // Exchange moves, one per (pair, link, direction): digits (fromI, fromJ) -> (toI, toJ).
  private readonly moveStrideI: Int32Array;
  private readonly moveStrideJ: Int32Array;
  private readonly moveFromI: Int32Array;
  private readonly moveFromJ: Int32Array;
  private readonly moveDelta: Int32Array;
  private readonly moveAmp: Float64Array;

  /** `diagonal`, when given, is used as is (threads share one diagonal in shared memory). */
  constructor(model: Model, basis: PinnedBasis, diagonal?: Float64Array) {
    this.dim = basis.dim;
    this.isComplex = model.isComplex;
    this.N = model.levels;
    this.strides = basis.strides;
    const N = this.N;

    const to: number[] = [];
    const from: number[] = [];
    const re: number[] = [];
    const im: number[] = [];
    for (let a = 0; a < N; a++) {
      for (let b = 0; b < N; b++) {
        if (a === b) continue;
        const r = model.localRe[a * N + b];
        const m = model.localIm[a * N + b];
        if (r !== 0 || m !== 0) {
          to.push(a);
          from.push(b);
          re.push(r);
          im.push(m);
        }
      }
    }
    this.localTo = Int32Array.from(to);
    this.localFrom = Int32Array.from(from);
    this.localRe = Float64Array.from(re);
    this.localIm = Float64Array.from(im);

    const sI: number[] = [];
    const sJ: number[] = [];
    const fI: number[] = [];
    const fJ: number[] = [];
    const delta: number[] = [];
    const amp: number[] = [];
    const pairs = model.exchangePairs;
    for (let p = 0; p < pairs.count; p++) {
      const Si = basis.strides[pairs.i[p]];
      const Sj = basis.strides[pairs.j[p]];
      for (let n = 0; n + 1 < N; n++) {
        const a = pairs.value[p] * model.exchangeWeights[n];
        if (a === 0) continue;
        // (n, n+1) -> (n+1, n) and back: one quantum of excitation changes hands.
        sI.push(Si, Si);
        sJ.push(Sj, Sj);
        fI.push(n, n + 1);
        fJ.push(n + 1, n);
        delta.push(Si - Sj, Sj - Si);
        amp.push(a, a);
      }
    }
    this.moveStrideI = Int32Array.from(sI);
    this.moveStrideJ = Int32Array.from(sJ);
    this.moveFromI = Int32Array.from(fI);
    this.moveFromJ = Int32Array.from(fJ);
    this.moveDelta = Int32Array.from(delta);
    this.moveAmp = Float64Array.from(amp);

    this.diagonal = diagonal ?? pinnedDiagonal(model, basis, new Float64Array(new SharedArrayBuffer(8 * basis.dim)));
  }

  /** Number of nonzero matrix elements the operator represents (what a stored matrix would hold). */
  nonzeros(): number {
    let nz = 0;
    for (let s = 0; s < this.dim; s++) if (this.diagonal[s] !== 0) nz++;
    const perDigit = this.dim / this.N;
    nz += this.localTo.length * perDigit * this.strides.length;
    nz += this.moveAmp.length * (perDigit / this.N);
    return nz;
  }

  apply(x: Float64Array, y: Float64Array): void {
    this.applyRange(x, y, 0, this.dim);
  }

  /**
   * Writes rows [lo, hi) of y = H x and nothing else, so threads sharing x can each own a slice
   * of y. Every term is a set of contiguous runs y[d..d+S) += h x[d+shift..]; runs are clipped
   * to the slice, and blocks that cannot reach it are skipped.
   */
  applyRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    if (this.isComplex) this.applyComplexRange(x, y, lo, hi);
    else this.applyRealRange(x, y, lo, hi);
  }

  private applyRealRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const N = this.N;
    const diag = this.diagonal;
    for (let s = lo; s < hi; s++) y[s] = diag[s] * x[s];
    const nLocal = this.localTo.length;
    for (let site = 0; site < this.strides.length; site++) {
      const S = this.strides[site];
      const block = N * S;
      for (let base = lo - (lo % block); base < hi; base += block) {
        for (let e = 0; e < nLocal; e++) {
          const h = this.localRe[e];
          const run = base + this.localTo[e] * S;
          const from = run < lo ? lo : run;
          const to = run + S > hi ? hi : run + S;
          const shift = (this.localFrom[e] - this.localTo[e]) * S;
          for (let t = from; t < to; t++) y[t] += h * x[t + shift];
        }
      }
    }
    const nMoves = this.moveAmp.length;
    for (let m = 0; m < nMoves; m++) {
      const Si = this.moveStrideI[m];
      const Sj = this.moveStrideJ[m];
      const amp = this.moveAmp[m];
      const delta = this.moveDelta[m];
      const offset = this.moveFromJ[m] * Sj + this.moveFromI[m] * Si + delta;
      const blockJ = N * Sj;
      const blockI = N * Si;
      for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
        for (let mb = 0; mb < Sj; mb += blockI) {
          const run = hb + mb + offset;
          const from = run < lo ? lo : run;
          const to = run + Si > hi ? hi : run + Si;
          for (let t = from; t < to; t++) y[t] += amp * x[t - delta];
        }
      }
    }
  }

  private applyComplexRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const N = this.N;
    const diag = this.diagonal;
    for (let s = lo; s < hi; s++) {
      const d = diag[s];
      y[2 * s] = d * x[2 * s];
      y[2 * s + 1] = d * x[2 * s + 1];
    }
    const nLocal = this.localTo.length;
    for (let site = 0; site < this.strides.length; site++) {
      const S = this.strides[site];
      const block = N * S;
      for (let base = lo - (lo % block); base < hi; base += block) {
        for (let e = 0; e < nLocal; e++) {
          const hr = this.localRe[e];
          const hi_ = this.localIm[e];
          const run = base + this.localTo[e] * S;
          const from = 2 * (run < lo ? lo : run);
          const to = 2 * (run + S > hi ? hi : run + S);
          const shift = 2 * (this.localFrom[e] - this.localTo[e]) * S;
          for (let t = from; t < to; t += 2) {
            const xr = x[t + shift];
            const xi = x[t + shift + 1];
            y[t] += hr * xr - hi_ * xi;
            y[t + 1] += hr * xi + hi_ * xr;
          }
        }
      }
    }
    const nMoves = this.moveAmp.length;
    for (let m = 0; m < nMoves; m++) {
      const Si = this.moveStrideI[m];
      const Sj = this.moveStrideJ[m];
      const amp = this.moveAmp[m];
      const delta = this.moveDelta[m];
      const offset = this.moveFromJ[m] * Sj + this.moveFromI[m] * Si + delta;
      const blockJ = N * Sj;
      const blockI = N * Si;
      for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
        for (let mb = 0; mb < Sj; mb += blockI) {
          const run = hb + mb + offset;
          const from = 2 * (run < lo ? lo : run);
          const to = 2 * (run + Si > hi ? hi : run + Si);
          for (let t = from; t < to; t++) y[t] += amp * x[t - 2 * delta];
        }
      }
    }
  }
}

/** Diagonal of the pinned Hamiltonian, built digit by digit with the same block loops. */
function pinnedDiagonal(model: Model, basis: PinnedBasis, diag: Float64Array): Float64Array {
  const dim = basis.dim;
  const N = model.levels;
  for (let site = 0; site < basis.sites; site++) {
    const S = basis.strides[site];
    for (let a = 0; a < N; a++) {
      const d = model.localRe[a * N + a];
      if (d === 0) continue;
      for (let base = a * S; base < dim; base += N * S) {
        for (let lo = 0; lo < S; lo++) diag[base + lo] += d;
      }
    }
  }
  const pairs = model.isingPairs;
  for (let p = 0; p < pairs.count; p++) {
    const Si = basis.strides[pairs.i[p]];
    const Sj = basis.strides[pairs.j[p]];
    for (let a = 0; a < N; a++) {
      for (let b = 0; b < N; b++) {
        const w = pairs.value[p] * model.moments[a] * model.moments[b];
        if (w === 0) continue;
        const offset = b * Sj + a * Si;
        for (let hb = 0; hb < dim; hb += N * Sj) {
          for (let mb = 0; mb < Sj; mb += N * Si) {
            const start = hb + mb + offset;
            for (let lo = 0; lo < Si; lo++) diag[start + lo] += w;
          }
        }
      }
    }
  }
  return diag;
}
