// Vector kernels of the Lanczos solver: dot products against a set of basis vectors, the
// subtraction of a combination of them, and the restart combination. Two implementations of each:
// WebAssembly with 128-bit SIMD (src/simd/vector.wat, about three times faster) for vectors that
// live in a VectorArena (src/simd/arena.ts), and plain loops over Float64Arrays for any other vector. Both group the basis
// vectors alike; results agree to rounding.

import type { VectorArena } from '../simd/arena.js';

/** Entries of a vector processed per block: a block of w stays in cache while basis vectors stream past. */
export const BLOCK = 2048;
/**
 * Entries per block of the SIMD subtraction with its fused dot products: longer runs keep the
 * hardware prefetcher streaming (measured 10-15% faster than BLOCK on 19 vectors of 2^20).
 */
export const SIMD_BLOCK = 16384;
/** DGKS criterion: if reorthogonalization shrinks the vector below this fraction, orthogonalize once more. */
const REORTH_ETA = Math.SQRT1_2;

export function norm2(v: Float64Array): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i] * v[i];
  return Math.sqrt(s);
}

export function scale(v: Float64Array, factor: number): void {
  for (let i = 0; i < v.length; i++) v[i] *= factor;
}

// Block kernels. Four basis vectors are handled per pass over a block of w: one load and store
// of w serves four of them, which about doubles the speed of these memory-bound loops in V8.

/** coef[i] += <set_i, w> over entries [start, end) of real vectors. */
function addDotsReal(
  w: Float64Array,
  set: Float64Array[],
  count: number,
  coef: Float64Array,
  start: number,
  end: number,
): void {
  let i = 0;
  for (; i + 4 <= count; i += 4) {
    const a0 = set[i];
    const a1 = set[i + 1];
    const a2 = set[i + 2];
    const a3 = set[i + 3];
    let s0 = 0;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    for (let t = start; t < end; t++) {
      const x = w[t];
      s0 += a0[t] * x;
      s1 += a1[t] * x;
      s2 += a2[t] * x;
      s3 += a3[t] * x;
    }
    coef[i] += s0;
    coef[i + 1] += s1;
    coef[i + 2] += s2;
    coef[i + 3] += s3;
  }
  for (; i < count; i++) {
    const a = set[i];
    let s = 0;
    for (let t = start; t < end; t++) s += a[t] * w[t];
    coef[i] += s;
  }
}

/** w -= sum_i coef[i] set_i over entries [start, end) of real vectors. */
function subtractReal(
  w: Float64Array,
  set: Float64Array[],
  count: number,
  coef: Float64Array,
  start: number,
  end: number,
): void {
  let i = 0;
  for (; i + 4 <= count; i += 4) {
    const a0 = set[i];
    const a1 = set[i + 1];
    const a2 = set[i + 2];
    const a3 = set[i + 3];
    const c0 = coef[i];
    const c1 = coef[i + 1];
    const c2 = coef[i + 2];
    const c3 = coef[i + 3];
    for (let t = start; t < end; t++) w[t] -= c0 * a0[t] + c1 * a1[t] + c2 * a2[t] + c3 * a3[t];
  }
  for (; i < count; i++) {
    const a = set[i];
    const c = coef[i];
    for (let t = start; t < end; t++) w[t] -= c * a[t];
  }
}

/** coef[2i], coef[2i+1] += <set_i, w> = sum conj(a) w over interleaved complex entries [start, end). */
function addDotsComplex(
  w: Float64Array,
  set: Float64Array[],
  count: number,
  coef: Float64Array,
  start: number,
  end: number,
): void {
  let i = 0;
  for (; i + 2 <= count; i += 2) {
    const a0 = set[i];
    const a1 = set[i + 1];
    let r0 = 0;
    let i0 = 0;
    let r1 = 0;
    let i1 = 0;
    for (let t = start; t < end; t += 2) {
      const wr = w[t];
      const wi = w[t + 1];
      const ar0 = a0[t];
      const ai0 = a0[t + 1];
      const ar1 = a1[t];
      const ai1 = a1[t + 1];
      r0 += ar0 * wr + ai0 * wi;
      i0 += ar0 * wi - ai0 * wr;
      r1 += ar1 * wr + ai1 * wi;
      i1 += ar1 * wi - ai1 * wr;
    }
    coef[2 * i] += r0;
    coef[2 * i + 1] += i0;
    coef[2 * i + 2] += r1;
    coef[2 * i + 3] += i1;
  }
  for (; i < count; i++) {
    const a = set[i];
    let re = 0;
    let im = 0;
    for (let t = start; t < end; t += 2) {
      const ar = a[t];
      const ai = a[t + 1];
      const wr = w[t];
      const wi = w[t + 1];
      re += ar * wr + ai * wi;
      im += ar * wi - ai * wr;
    }
    coef[2 * i] += re;
    coef[2 * i + 1] += im;
  }
}

/** w -= sum_i c_i set_i (complex c_i interleaved in coef) over entries [start, end). */
function subtractComplex(
  w: Float64Array,
  set: Float64Array[],
  count: number,
  coef: Float64Array,
  start: number,
  end: number,
): void {
  let i = 0;
  for (; i + 2 <= count; i += 2) {
    const a0 = set[i];
    const a1 = set[i + 1];
    const cr0 = coef[2 * i];
    const ci0 = coef[2 * i + 1];
    const cr1 = coef[2 * i + 2];
    const ci1 = coef[2 * i + 3];
    for (let t = start; t < end; t += 2) {
      const ar0 = a0[t];
      const ai0 = a0[t + 1];
      const ar1 = a1[t];
      const ai1 = a1[t + 1];
      w[t] -= cr0 * ar0 - ci0 * ai0 + cr1 * ar1 - ci1 * ai1;
      w[t + 1] -= cr0 * ai0 + ci0 * ar0 + cr1 * ai1 + ci1 * ar1;
    }
  }
  for (; i < count; i++) {
    const a = set[i];
    const cr = coef[2 * i];
    const ci = coef[2 * i + 1];
    for (let t = start; t < end; t += 2) {
      const ar = a[t];
      const ai = a[t + 1];
      w[t] -= cr * ar - ci * ai;
      w[t + 1] -= cr * ai + ci * ar;
    }
  }
}

/**
 * In place: basis[c] <- sum_i basis[i] * y[i*ys + c] for c < keep, using the first `size` basis
 * vectors. Coefficients are real (Ritz vectors of a real symmetric T), so re and im entries
 * of complex vectors are combined alike.
 */
function combineJs(
  basis: Float64Array[],
  size: number,
  y: Float64Array,
  ys: number,
  keep: number,
  scratch: Float64Array,
): void {
  const len = basis[0].length;
  for (let start = 0; start < len; start += BLOCK) {
    const end = Math.min(start + BLOCK, len);
    const width = end - start;
    for (let c = 0; c < keep; c++) {
      const offset = c * BLOCK - start;
      for (let t = start; t < end; t++) scratch[offset + t] = 0;
      let i = 0;
      for (; i + 4 <= size; i += 4) {
        const a0 = basis[i];
        const a1 = basis[i + 1];
        const a2 = basis[i + 2];
        const a3 = basis[i + 3];
        const y0 = y[i * ys + c];
        const y1 = y[(i + 1) * ys + c];
        const y2 = y[(i + 2) * ys + c];
        const y3 = y[(i + 3) * ys + c];
        for (let t = start; t < end; t++) scratch[offset + t] += y0 * a0[t] + y1 * a1[t] + y2 * a2[t] + y3 * a3[t];
      }
      for (; i < size; i++) {
        const a = basis[i];
        const coefficient = y[i * ys + c];
        for (let t = start; t < end; t++) scratch[offset + t] += coefficient * a[t];
      }
    }
    for (let c = 0; c < keep; c++) {
      const target = basis[c];
      const offset = c * BLOCK;
      for (let t = 0; t < width; t++) target[start + t] = scratch[offset + t];
    }
  }
}

export function coefficientNormSquared(coef: Float64Array, count: number, isComplex: boolean): number {
  const n = isComplex ? 2 * count : count;
  let s = 0;
  for (let i = 0; i < n; i++) s += coef[i] * coef[i];
  return s;
}

/**
 * What helper threads do for the kernels, each on its slice of the vectors (kernelTeam.ts).
 * Each returns false / null when it could not take the work, and the caller runs it alone.
 */
export interface KernelHelpers {
  /** coef[0..) = <set_i, w>; `table` holds the set's pointers. */
  project(
    w: Float64Array,
    length: number,
    table: number,
    count: number,
    isComplex: boolean,
    coef: Float64Array,
  ): boolean;
  /** w -= sum_i coef_i set_i; returns ||w||^2; fills `nextCoef` with the new w's dots when given. */
  subtract(
    w: Float64Array,
    length: number,
    table: number,
    count: number,
    isComplex: boolean,
    coef: Float64Array,
    nextCoef: Float64Array | null,
  ): number | null;
  /** The restart combination. */
  combine(length: number, table: number, size: number, y: Float64Array, ys: number, keep: number): boolean;
}

/**
 * The solver's vector operations. With an arena, operations whose vectors (and coefficient
 * arrays) all live in it run in WebAssembly; anything else runs in plain loops.
 */
export class VectorKernels {
  /** Helper threads sharing the arena's kernels, when the caller allows more than one thread. */
  team: KernelHelpers | null = null;

  constructor(readonly arena: VectorArena | null) {}

  /** A working vector: in the arena when there is one. */
  vector(length: number): Float64Array {
    return this.arena ? this.arena.vector(length) : new Float64Array(length);
  }

  private inArena(w: Float64Array, set: Float64Array[], count: number, coef: Float64Array): VectorArena | null {
    const arena = this.arena;
    return arena && arena.owns(w) && arena.owns(coef) && arena.ownsAll(set, count) ? arena : null;
  }

  /** Length the SIMD loops cover: the vector plus its zero padding. */
  private static padded(w: Float64Array): number {
    return w.length + (w.length & 1);
  }

  /** v *= factor (in SIMD when v lives in the arena; the same bits either way). */
  scale(v: Float64Array, factor: number): void {
    const arena = this.arena;
    if (arena && arena.owns(v)) arena.wasm.scale(v.byteOffset, factor, v.length);
    else scale(v, factor);
  }

  /** y += h x (in SIMD when both live in the arena; the same bits either way). */
  axpy(y: Float64Array, x: Float64Array, h: number): void {
    const arena = this.arena;
    if (arena && arena.owns(y) && arena.owns(x)) arena.wasm.axpy(y.byteOffset, x.byteOffset, h, y.length);
    else for (let t = 0; t < y.length; t++) y[t] += h * x[t];
  }

  norm2(v: Float64Array): number {
    const arena = this.arena;
    if (arena && arena.owns(v)) return Math.sqrt(arena.wasm.normSquared(v.byteOffset, 0, VectorKernels.padded(v)));
    return norm2(v);
  }

  /** coef[i] = <set_i, w> (real) or interleaved complex, for i < count. */
  project(w: Float64Array, set: Float64Array[], count: number, isComplex: boolean, coef: Float64Array): void {
    coef.fill(0, 0, isComplex ? 2 * count : count);
    const arena = this.inArena(w, set, count, coef);
    if (arena) {
      const table = arena.pointers(set, count);
      const end = VectorKernels.padded(w);
      if (this.team?.project(w, end, table, count, isComplex, coef)) return;
      if (isComplex) arena.wasm.dotsComplex(w.byteOffset, table, count, coef.byteOffset, 0, end);
      else arena.wasm.dotsReal(w.byteOffset, table, count, coef.byteOffset, 0, end);
      return;
    }
    const len = w.length;
    for (let start = 0; start < len; start += BLOCK) {
      const end = Math.min(start + BLOCK, len);
      if (isComplex) addDotsComplex(w, set, count, coef, start, end);
      else addDotsReal(w, set, count, coef, start, end);
    }
  }

  /**
   * w -= sum_i coef_i set_i; returns ||w||^2 afterwards. When `nextCoef` is given, the coefficients
   * of the updated w along the same set are accumulated in the same sweep (the second Gram-Schmidt
   * pass then needs no separate read of the basis for its dot products: the block is still cached).
   */
  subtract(
    w: Float64Array,
    set: Float64Array[],
    count: number,
    isComplex: boolean,
    coef: Float64Array,
    nextCoef: Float64Array | null,
  ): number {
    if (nextCoef) nextCoef.fill(0, 0, isComplex ? 2 * count : count);
    const arena = this.inArena(w, set, count, coef);
    if (arena && (!nextCoef || arena.owns(nextCoef))) {
      const table = arena.pointers(set, count);
      const len = VectorKernels.padded(w);
      const shared = this.team ? this.team.subtract(w, len, table, count, isComplex, coef, nextCoef) : null;
      if (shared !== null) return shared;
      const wasm = arena.wasm;
      let normSquared = 0;
      for (let start = 0; start < len; start += SIMD_BLOCK) {
        const end = Math.min(start + SIMD_BLOCK, len);
        if (isComplex) {
          wasm.subtractComplex(w.byteOffset, table, count, coef.byteOffset, start, end);
          if (nextCoef) wasm.dotsComplex(w.byteOffset, table, count, nextCoef.byteOffset, start, end);
        } else {
          wasm.subtractReal(w.byteOffset, table, count, coef.byteOffset, start, end);
          if (nextCoef) wasm.dotsReal(w.byteOffset, table, count, nextCoef.byteOffset, start, end);
        }
        normSquared += wasm.normSquared(w.byteOffset, start, end);
      }
      return normSquared;
    }
    const len = w.length;
    let normSquared = 0;
    for (let start = 0; start < len; start += BLOCK) {
      const end = Math.min(start + BLOCK, len);
      if (isComplex) {
        subtractComplex(w, set, count, coef, start, end);
        if (nextCoef) addDotsComplex(w, set, count, nextCoef, start, end);
      } else {
        subtractReal(w, set, count, coef, start, end);
        if (nextCoef) addDotsReal(w, set, count, nextCoef, start, end);
      }
      for (let t = start; t < end; t++) normSquared += w[t] * w[t];
    }
    return normSquared;
  }

  /**
   * Orthogonalize w against the orthonormal set[0..count) with classical Gram-Schmidt done twice
   * ("twice is enough"), and a third time if the second pass still removed most of what was left.
   * Returns ||w|| afterwards (w is not normalized).
   */
  orthogonalize(
    w: Float64Array,
    set: Float64Array[],
    count: number,
    isComplex: boolean,
    coef: Float64Array,
    coef2: Float64Array,
  ): number {
    if (count === 0) return this.norm2(w);
    this.project(w, set, count, isComplex, coef);
    const afterFirst = Math.sqrt(this.subtract(w, set, count, isComplex, coef, coef2));
    let after = Math.sqrt(this.subtract(w, set, count, isComplex, coef2, null));
    if (after < REORTH_ETA * afterFirst && after > 0) {
      this.project(w, set, count, isComplex, coef2);
      after = Math.sqrt(this.subtract(w, set, count, isComplex, coef2, null));
    }
    return after;
  }

  /**
   * In place: basis[c] <- sum_i basis[i] * y[i*ys + c] for c < keep, using the first `size` basis
   * vectors. Coefficients are real (Ritz vectors of a real symmetric T), so re and im entries
   * of complex vectors are combined alike. `scratch` holds keep * BLOCK doubles.
   */
  combine(basis: Float64Array[], size: number, y: Float64Array, ys: number, keep: number, scratch: Float64Array): void {
    const arena = this.arena;
    if (arena && arena.owns(y) && arena.owns(scratch) && arena.ownsAll(basis, size)) {
      const table = arena.pointers(basis, size);
      const len = VectorKernels.padded(basis[0]);
      if (this.team?.combine(len, table, size, y, ys, keep)) return;
      for (let start = 0; start < len; start += BLOCK) {
        arena.wasm.combine(
          table,
          size,
          y.byteOffset,
          ys,
          keep,
          scratch.byteOffset,
          start,
          Math.min(start + BLOCK, len),
        );
      }
      return;
    }
    combineJs(basis, size, y, ys, keep, scratch);
  }
}

/** Plain-loop kernels for vectors outside any arena (the dense path, deflation checks). */
export const plainKernels = new VectorKernels(null);
