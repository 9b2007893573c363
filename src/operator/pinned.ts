// The pinned Hamiltonian as strided block loops over the mixed-radix index.

import type { PinnedBasis } from '../basis/basis.js';
import { siteLocal, type Model } from '../model/model.js';
import type { HermitianOperator } from './hermitian.js';
import { complexRowInto } from './csr.js';
import { arenaHolding, type VectorArena } from '../simd/arena.js';

/** Byte offsets of the block pass's data copied into an arena (see PinnedOperator.placementIn). */
export interface BlockPlacement {
  diag: number;
  rowStart: number;
  column: number;
  re: number;
  im: number;
}

/** Runs at least this long go to the SIMD kernel when x and y live in an arena. */
const SIMD_RUN = 16;

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
  // Off-diagonal entries of each site's h: y[a] += h_ab x[b], site i's at [localStart[i], localStart[i+1]).
  private readonly localStart: Int32Array;
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
  // Terms acting only on the lowest `blockSites` sites form one small sparse matrix on a block of
  // B = N^blockSites consecutive states, applied block by block from cache; short strides would
  // otherwise mean loops of a few elements. Higher sites use the long strided runs.
  /** Exchange moves of every pair, those folded into the block matrix included. */
  private readonly exchangeMoves: number;
  private readonly blockSites: number;
  private readonly blockSize: number;
  private readonly blockRowStart: Int32Array;
  private readonly blockColumn: Int32Array;
  private readonly blockRe: Float64Array;
  private readonly blockIm: Float64Array;

  /** Where each arena holds this operator's block-pass data (null: no room, plain loops serve). */
  private readonly placements = new WeakMap<VectorArena, { placement: BlockPlacement | null; epoch: number }>();

  /** `diagonal`, when given, is used as is (threads share one diagonal in shared memory). */
  constructor(model: Model, basis: PinnedBasis, diagonal?: Float64Array) {
    this.dim = basis.dim;
    this.isComplex = model.isComplex;
    this.N = model.levels;
    this.strides = basis.strides;
    const N = this.N;

    const start: number[] = [0];
    const to: number[] = [];
    const from: number[] = [];
    const re: number[] = [];
    const im: number[] = [];
    for (let site = 0; site < basis.sites; site++) {
      const h = siteLocal(model, site);
      for (let a = 0; a < N; a++) {
        for (let b = 0; b < N; b++) {
          if (a === b) continue;
          const r = h.re[a * N + b];
          const m = h.im[a * N + b];
          if (r !== 0 || m !== 0) {
            to.push(a);
            from.push(b);
            re.push(r);
            im.push(m);
          }
        }
      }
      start.push(to.length);
    }
    this.localStart = Int32Array.from(start);
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
    // Moves between two low sites go into the block matrix; the rest stay moves.
    const maxBlock = 4096;
    let blockSites = 0;
    let blockSize = 1;
    while (blockSites < basis.sites && blockSize * N <= maxBlock) {
      blockSites++;
      blockSize *= N;
    }
    this.blockSites = blockSites;
    this.blockSize = blockSize;
    this.exchangeMoves = amp.length;
    const keepMove = sJ.map((Sj) => Sj >= blockSize);
    const pick = <T extends number>(list: T[]) => list.filter((_, k) => keepMove[k]);
    sI.splice(0, sI.length, ...pick(sI));
    fI.splice(0, fI.length, ...pick(fI));
    fJ.splice(0, fJ.length, ...pick(fJ));
    delta.splice(0, delta.length, ...pick(delta));
    amp.splice(0, amp.length, ...pick(amp));
    sJ.splice(0, sJ.length, ...pick(sJ));
    const block = blockMatrix(model, basis, blockSites, blockSize);
    this.blockRowStart = block.rowStart;
    this.blockColumn = block.column;
    this.blockRe = block.re;
    this.blockIm = block.im;

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
    nz += this.localTo.length * perDigit;
    nz += this.exchangeMoves * (perDigit / this.N);
    return nz;
  }

  apply(x: Float64Array, y: Float64Array): void {
    this.applyRange(x, y, 0, this.dim);
  }

  /**
   * The block pass's data (diagonal and the block's sparse rows) in `arena`, copied there on
   * first use so the SIMD module can read it beside x and y. An arena attached from another
   * thread cannot allocate: it gets the placement its owner made through `adopt`.
   */
  placementIn(arena: VectorArena): BlockPlacement | null {
    const known = this.placements.get(arena);
    if (known !== undefined && known.epoch === arena.epoch) return known.placement;
    let placement: BlockPlacement | null = null;
    if (arena.allocates) {
      const diag = arena.copyOf(this.diagonal);
      const rowStart = arena.copyOf(this.blockRowStart);
      const column = arena.copyOf(this.blockColumn);
      const re = arena.copyOf(this.blockRe);
      const im = arena.copyOf(this.blockIm);
      if (diag && rowStart && column && re && im) {
        placement = {
          diag: diag.byteOffset,
          rowStart: rowStart.byteOffset,
          column: column.byteOffset,
          re: re.byteOffset,
          im: im.byteOffset,
        };
      }
    }
    this.placements.set(arena, { placement, epoch: arena.epoch });
    return placement;
  }

  /** Use a placement another thread made in the memory `arena` is attached to. */
  adopt(arena: VectorArena, placement: BlockPlacement): void {
    this.placements.set(arena, { placement, epoch: arena.epoch });
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
    const arena = arenaHolding(x, y);
    const wasm = arena?.wasm;
    const placed = arena ? this.placementIn(arena) : null;
    const xAt = x.byteOffset;
    const yAt = y.byteOffset;
    const diag = this.diagonal;
    // Block pass: y = diag x + (terms within the low sites) x, block by block.
    const B = this.blockSize;
    const rs = this.blockRowStart;
    const col = this.blockColumn;
    const val = this.blockRe;
    if (wasm && placed) wasm.blockPassReal(yAt, xAt, placed.diag, placed.rowStart, placed.column, placed.re, B, lo, hi);
    else
      for (let base = lo - (lo % B); base < hi; base += B) {
        const r0 = base < lo ? lo - base : 0;
        const r1 = base + B > hi ? hi - base : B;
        // Two sums take the terms in turn, the first starting from the diagonal term, as the
        // WebAssembly pass adds them (same bits).
        for (let r = r0; r < r1; r++) {
          const s = base + r;
          let acc0 = diag[s] * x[s];
          let acc1 = 0;
          const end = rs[r + 1];
          for (let k = rs[r]; k < end; k++) {
            const next = acc0 + val[k] * x[base + col[k]];
            acc0 = acc1;
            acc1 = next;
          }
          y[s] = acc0 + acc1;
        }
      }
    for (let site = this.blockSites; site < this.strides.length; site++) {
      const S = this.strides[site];
      const block = N * S;
      for (let base = lo - (lo % block); base < hi; base += block) {
        for (let e = this.localStart[site]; e < this.localStart[site + 1]; e++) {
          const h = this.localRe[e];
          const run = base + this.localTo[e] * S;
          const from = run < lo ? lo : run;
          const to = run + S > hi ? hi : run + S;
          const shift = (this.localFrom[e] - this.localTo[e]) * S;
          if (wasm && to - from >= SIMD_RUN) wasm.axpy(yAt + 8 * from, xAt + 8 * (from + shift), h, to - from);
          else for (let t = from; t < to; t++) y[t] += h * x[t + shift];
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
      if (Si >= SHORT_RUN) {
        for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
          for (let mb = 0; mb < Sj; mb += blockI) {
            const run = hb + mb + offset;
            const from = run < lo ? lo : run;
            const to = run + Si > hi ? hi : run + Si;
            if (wasm && to - from >= SIMD_RUN) wasm.axpy(yAt + 8 * from, xAt + 8 * (from - delta), amp, to - from);
            else for (let t = from; t < to; t++) y[t] += amp * x[t - delta];
          }
        }
        continue;
      }
      // Short runs (a low site paired with a high one): walk each residue with stride N*Si
      // through the family of targets [hb + toJ*Sj, hb + toJ*Sj + Sj).
      const familyStart = offset - (offset % Sj);
      for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
        const stop = Math.min(hb + familyStart + Sj, hi);
        for (let r = 0; r < Si; r++) {
          let t = hb + offset + r;
          if (t < lo) t += Math.ceil((lo - t) / blockI) * blockI;
          for (; t < stop; t += blockI) y[t] += amp * x[t - delta];
        }
      }
    }
  }

  private applyComplexRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const N = this.N;
    const arena = arenaHolding(x, y);
    const wasm = arena?.wasm;
    const placed = arena ? this.placementIn(arena) : null;
    const xAt = x.byteOffset;
    const yAt = y.byteOffset;
    const diag = this.diagonal;
    const B = this.blockSize;
    const rs = this.blockRowStart;
    const col = this.blockColumn;
    const vr = this.blockRe;
    const vi = this.blockIm;
    if (wasm && placed) {
      wasm.blockPassComplex(yAt, xAt, placed.diag, placed.rowStart, placed.column, placed.re, placed.im, B, lo, hi);
    } else
      for (let base = lo - (lo % B); base < hi; base += B) {
        const r0 = base < lo ? lo - base : 0;
        const r1 = base + B > hi ? hi - base : B;
        for (let r = r0; r < r1; r++) {
          const s = base + r;
          const d = diag[s];
          complexRowInto(y, s, x, base, col, vr, vi, rs[r], rs[r + 1], d * x[2 * s], d * x[2 * s + 1]);
        }
      }
    for (let site = this.blockSites; site < this.strides.length; site++) {
      const S = this.strides[site];
      const block = N * S;
      for (let base = lo - (lo % block); base < hi; base += block) {
        for (let e = this.localStart[site]; e < this.localStart[site + 1]; e++) {
          const hr = this.localRe[e];
          const hi_ = this.localIm[e];
          const run = base + this.localTo[e] * S;
          const from = 2 * (run < lo ? lo : run);
          const to = 2 * (run + S > hi ? hi : run + S);
          const shift = 2 * (this.localFrom[e] - this.localTo[e]) * S;
          if (wasm && to - from >= 2 * SIMD_RUN) {
            wasm.caxpy(yAt + 8 * from, xAt + 8 * (from + shift), hr, hi_, (to - from) >> 1);
            continue;
          }
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
      if (Si >= SHORT_RUN) {
        for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
          for (let mb = 0; mb < Sj; mb += blockI) {
            const run = hb + mb + offset;
            const from = 2 * (run < lo ? lo : run);
            const to = 2 * (run + Si > hi ? hi : run + Si);
            if (wasm && to - from >= SIMD_RUN) wasm.axpy(yAt + 8 * from, xAt + 8 * (from - 2 * delta), amp, to - from);
            else for (let t = from; t < to; t++) y[t] += amp * x[t - 2 * delta];
          }
        }
        continue;
      }
      const familyStart = offset - (offset % Sj);
      for (let hb = lo - (lo % blockJ); hb < hi; hb += blockJ) {
        const stop = Math.min(hb + familyStart + Sj, hi);
        for (let r = 0; r < Si; r++) {
          let t = hb + offset + r;
          if (t < lo) t += Math.ceil((lo - t) / blockI) * blockI;
          for (; t < stop; t += blockI) {
            y[2 * t] += amp * x[2 * (t - delta)];
            y[2 * t + 1] += amp * x[2 * (t - delta) + 1];
          }
        }
      }
    }
  }
}

/** Runs shorter than this are walked by stride instead of as contiguous runs. */
const SHORT_RUN = 16;

/**
 * The terms that act only within the lowest `sites` sites, as a sparse matrix on one block of
 * N^sites consecutive states (the same for every block): tunnelling on those sites and exchange
 * between two of them. Row r holds <r|H|c> for columns c of the block.
 */
function blockMatrix(model: Model, basis: PinnedBasis, sites: number, size: number) {
  // One pass into typed arrays sized for the most entries a row can have (a local move per other
  // level of each site, at most one exchange move per pair), then trimmed: growing plain arrays
  // cost a scan's small points a good part of their time, and a counting pass doubles the walk.
  let pairsInBlock = 0;
  for (let p = 0; p < model.exchangePairs.count; p++) if (model.exchangePairs.j[p] < sites) pairsInBlock++;
  const capacity = size * (sites * (model.levels - 1) + pairsInBlock);
  const rowStart = new Int32Array(size + 1);
  const column = new Int32Array(capacity);
  const re = new Float64Array(capacity);
  const im = new Float64Array(capacity);
  const count = blockEntries(model, basis, sites, size, rowStart, column, re, im);
  return { rowStart, column: column.slice(0, count), re: re.slice(0, count), im: im.slice(0, count) };
}

/** Writes the block's rows (row starts and entries); returns the number of entries. */
function blockEntries(
  model: Model,
  basis: PinnedBasis,
  sites: number,
  size: number,
  rowStart: Int32Array,
  column: Int32Array,
  re: Float64Array,
  im: Float64Array,
): number {
  const N = model.levels;
  const digits = new Int32Array(sites);
  const w = model.exchangeWeights;
  const ep = model.exchangePairs;
  const local = Array.from({ length: sites }, (_, i) => siteLocal(model, i));
  let k = 0;
  for (let r = 0; r < size; r++) {
    let rest = r;
    for (let i = 0; i < sites; i++) {
      digits[i] = rest % N;
      rest = Math.floor(rest / N);
    }
    for (let i = 0; i < sites; i++) {
      const a = digits[i];
      const h = local[i];
      for (let b = 0; b < N; b++) {
        if (b === a) continue;
        const hr = h.re[a * N + b];
        const hi = h.im[a * N + b];
        if (hr === 0 && hi === 0) continue;
        column[k] = r + (b - a) * basis.strides[i];
        re[k] = hr;
        im[k++] = hi;
      }
    }
    for (let p = 0; p < ep.count; p++) {
      const i = ep.i[p];
      const j = ep.j[p];
      if (j >= sites) continue;
      const di = digits[i];
      const dj = digits[j];
      // this row (d_i, d_j) = (n+1, n) is reached from (n, n+1), and the other way round
      let to = -1;
      let amplitude = 0;
      if (di === dj + 1 && w[dj] !== 0) {
        to = r - basis.strides[i] + basis.strides[j];
        amplitude = ep.value[p] * w[dj];
      } else if (dj === di + 1 && w[di] !== 0) {
        to = r + basis.strides[i] - basis.strides[j];
        amplitude = ep.value[p] * w[di];
      }
      if (to < 0) continue;
      column[k] = to;
      re[k] = amplitude;
      im[k++] = 0;
    }
    rowStart[r + 1] = k;
  }
  return k;
}

/** Diagonal of the pinned Hamiltonian, built digit by digit with the same block loops. */
function pinnedDiagonal(model: Model, basis: PinnedBasis, diag: Float64Array): Float64Array {
  const dim = basis.dim;
  const N = model.levels;
  for (let site = 0; site < basis.sites; site++) {
    const S = basis.strides[site];
    const h = siteLocal(model, site);
    for (let a = 0; a < N; a++) {
      const d = h.re[a * N + a];
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
