// The pinned Hamiltonian one basis state at a time: H|s> = sum_t <t|H|s> |t>. Symmetry sectors
// and symmetry checks need the individual matrix elements of a state, not a whole product.

import type { PinnedBasis } from '../basis/basis.js';
import { siteLocal, type Model } from '../model/model.js';

/** Reusable output of `PinnedColumns.of`: targets and amplitudes <t|H|s>, diagonal first. */
export interface ColumnBuffer {
  count: number;
  targets: Float64Array;
  re: Float64Array;
  im: Float64Array;
}

export function columnBuffer(model: Model): ColumnBuffer {
  const N = model.levels;
  const capacity = 1 + model.sites * (N - 1) * 2 + 2 * model.exchangePairs.count + 4;
  return {
    count: 0,
    targets: new Float64Array(capacity),
    re: new Float64Array(capacity),
    im: new Float64Array(capacity),
  };
}

export class PinnedColumns {
  private readonly N: number;
  private readonly L: number;
  private readonly strides: Float64Array;
  private readonly digits: Int32Array;
  /** For each level b, the levels a it tunnels to with <a|h|b>, flattened with offsets. */
  private readonly moveStart: Int32Array;
  private readonly moveTo: Int32Array;
  private readonly moveRe: Float64Array;
  private readonly moveIm: Float64Array;
  /** <n|h_i|n> at i * N + n. */
  private readonly localDiagonal: Float64Array;

  constructor(
    private readonly model: Model,
    basis: PinnedBasis,
  ) {
    this.N = model.levels;
    this.L = model.sites;
    this.strides = Float64Array.from(basis.strides);
    this.digits = new Int32Array(this.L);
    const N = this.N;
    const start: number[] = [0];
    const to: number[] = [];
    const re: number[] = [];
    const im: number[] = [];
    const diagonal: number[] = [];
    // Per site (each its own h under disorder), per level b: the moves out of b.
    for (let site = 0; site < this.L; site++) {
      const h = siteLocal(model, site);
      for (let b = 0; b < N; b++) {
        diagonal.push(h.re[b * N + b]);
        for (let a = 0; a < N; a++) {
          if (a === b) continue;
          const r = h.re[a * N + b];
          const m = h.im[a * N + b];
          if (r !== 0 || m !== 0) {
            to.push(a);
            re.push(r);
            im.push(m);
          }
        }
        start.push(to.length);
      }
    }
    this.localDiagonal = Float64Array.from(diagonal);
    this.moveStart = Int32Array.from(start);
    this.moveTo = Int32Array.from(to);
    this.moveRe = Float64Array.from(re);
    this.moveIm = Float64Array.from(im);
  }

  /** Fills `out` with the nonzero <t|H|s>; the first entry is always the diagonal (t = s). */
  of(s: number, out: ColumnBuffer): void {
    const { N, L, digits, strides, model } = this;
    let r = s;
    for (let i = 0; i < L; i++) {
      const q = Math.floor(r / N);
      digits[i] = r - q * N;
      r = q;
    }
    let diag = 0;
    for (let i = 0; i < L; i++) diag += this.localDiagonal[i * N + digits[i]];
    const ip = model.isingPairs;
    for (let p = 0; p < ip.count; p++)
      diag += ip.value[p] * model.moments[digits[ip.i[p]]] * model.moments[digits[ip.j[p]]];
    out.targets[0] = s;
    out.re[0] = diag;
    out.im[0] = 0;
    let c = 1;
    for (let i = 0; i < L; i++) {
      const b = digits[i];
      for (let m = this.moveStart[i * N + b]; m < this.moveStart[i * N + b + 1]; m++) {
        out.targets[c] = s + (this.moveTo[m] - b) * strides[i];
        out.re[c] = this.moveRe[m];
        out.im[c] = this.moveIm[m];
        c++;
      }
    }
    const ep = model.exchangePairs;
    const w = model.exchangeWeights;
    for (let p = 0; p < ep.count; p++) {
      const i = ep.i[p];
      const j = ep.j[p];
      const di = digits[i];
      const dj = digits[j];
      if (dj === di + 1 && w[di] !== 0) {
        out.targets[c] = s + strides[i] - strides[j];
        out.re[c] = ep.value[p] * w[di];
        out.im[c] = 0;
        c++;
      } else if (di === dj + 1 && w[dj] !== 0) {
        out.targets[c] = s - strides[i] + strides[j];
        out.re[c] = ep.value[p] * w[dj];
        out.im[c] = 0;
        c++;
      }
    }
    out.count = c;
  }
}
