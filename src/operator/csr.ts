// Stored sparse matrices in compressed rows.

import type { HermitianOperator } from '../operator.js';
import { arenaHolding, type VectorArena } from '../simd.js';

/**
 * A stored sparse Hermitian matrix in compressed rows (full rows, both triangles), for bases whose
 * terms are not simple digit moves (Fock bases, symmetry sectors). Built once, row by row.
 */
export class CsrOperator implements HermitianOperator {
  constructor(
    readonly dim: number,
    readonly isComplex: boolean,
    readonly rowStart: Float64Array,
    readonly columns: Int32Array,
    readonly valuesRe: Float64Array,
    readonly valuesIm: Float64Array | null,
  ) {}

  nonzeros(): number {
    return this.columns.length;
  }

  apply(x: Float64Array, y: Float64Array): void {
    this.applyRange(x, y, 0, this.dim);
  }

  /** The arena holding the matrix (built there by `CsrBuilder.finish(arena)`), if any. */
  get arena(): VectorArena | null {
    return arenaHolding(this.valuesRe, this.valuesRe);
  }

  /** Rows [lo, hi) of y = H x only, so threads can share one product. */
  applyRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const rs = this.rowStart;
    const col = this.columns;
    const vr = this.valuesRe;
    const vi = this.valuesIm;
    // Matrix, x and y in one arena: the WebAssembly loop (same order of operations, same bits).
    const arena = arenaHolding(x, y);
    if (arena && arena.owns(vr) && arena.owns(rs) && (col.length === 0 || arena.owns(col as never))) {
      if (vi === null) arena.wasm.csrReal(y.byteOffset, x.byteOffset, rs.byteOffset, col.byteOffset, vr.byteOffset, lo, hi);
      else if (arena.owns(vi)) arena.wasm.csrComplex(y.byteOffset, x.byteOffset, rs.byteOffset, col.byteOffset, vr.byteOffset, vi.byteOffset, lo, hi);
      else this.applyPlain(x, y, lo, hi);
      return;
    }
    this.applyPlain(x, y, lo, hi);
  }

  private applyPlain(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const rs = this.rowStart;
    const col = this.columns;
    const vr = this.valuesRe;
    const vi = this.valuesIm;
    if (vi === null) {
      for (let r = lo; r < hi; r++) {
        let acc = 0;
        const end = rs[r + 1];
        for (let k = rs[r]; k < end; k++) acc += vr[k] * x[col[k]];
        y[r] = acc;
      }
      return;
    }
    for (let r = lo; r < hi; r++) {
      let accR = 0;
      let accI = 0;
      const end = rs[r + 1];
      for (let k = rs[r]; k < end; k++) {
        const c = 2 * col[k];
        const hr = vr[k];
        const hi = vi[k];
        const xr = x[c];
        const xi = x[c + 1];
        accR += hr * xr - hi * xi;
        accI += hr * xi + hi * xr;
      }
      y[2 * r] = accR;
      y[2 * r + 1] = accI;
    }
  }
}

/** Collects matrix elements row by row into growable typed arrays; `finish` yields a CsrOperator. */
export class CsrBuilder {
  private columns = new Int32Array(1024);
  private re = new Float64Array(1024);
  private im: Float64Array | null;
  private size = 0;
  private readonly rowStart: Float64Array;
  private row = 0;

  constructor(
    readonly dim: number,
    readonly isComplex: boolean,
  ) {
    this.rowStart = new Float64Array(dim + 1);
    this.im = isComplex ? new Float64Array(1024) : null;
  }

  /** Adds <row|H|col> to the current row; repeated columns within a row are summed by the product anyway. */
  add(col: number, re: number, im = 0): void {
    if (this.size === this.columns.length) this.grow();
    this.columns[this.size] = col;
    this.re[this.size] = re;
    if (this.im) this.im[this.size] = im;
    this.size++;
  }

  endRow(): void {
    this.row++;
    this.rowStart[this.row] = this.size;
  }

  /**
   * The matrix in shared memory, so a product can be split across worker threads without copying
   * it; with `arena`, in that arena's memory (for the SIMD module), unless it has no room left.
   */
  finish(arena?: VectorArena | null): CsrOperator {
    if (this.row !== this.dim) throw new Error(`CsrBuilder: ${this.row} rows ended, expected ${this.dim}`);
    if (arena) {
      const rowStart = arena.copyOf(this.rowStart);
      const columns = arena.copyOf(this.columns.subarray(0, this.size));
      const re = arena.copyOf(this.re.subarray(0, this.size));
      const im = this.im ? arena.copyOf(this.im.subarray(0, this.size)) : null;
      if (rowStart && columns && re && (im || !this.im)) return new CsrOperator(this.dim, this.isComplex, rowStart, columns, re, im);
    }
    return new CsrOperator(
      this.dim,
      this.isComplex,
      sharedCopy(this.rowStart, this.dim + 1, Float64Array),
      sharedCopy(this.columns, this.size, Int32Array),
      sharedCopy(this.re, this.size, Float64Array),
      this.im ? sharedCopy(this.im, this.size, Float64Array) : null,
    );
  }

  private grow(): void {
    const cap = Math.ceil(this.columns.length * 1.5);
    const c = new Int32Array(cap);
    c.set(this.columns);
    this.columns = c;
    const r = new Float64Array(cap);
    r.set(this.re);
    this.re = r;
    if (this.im) {
      const i = new Float64Array(cap);
      i.set(this.im);
      this.im = i;
    }
  }
}

/** The first `length` entries of `source` in a new array backed by a SharedArrayBuffer. */
export function sharedCopy<T extends Float64Array | Int32Array>(
  source: T,
  length: number,
  kind: { new (buffer: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number },
): T {
  const out = new kind(new SharedArrayBuffer(Math.max(1, length) * kind.BYTES_PER_ELEMENT));
  out.set(source.subarray(0, length) as never);
  return out.length === length ? out : (out.subarray(0, length) as T);
}
