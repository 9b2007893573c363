// Stored sparse matrices in compressed rows.

import type { HermitianOperator } from './hermitian.js';
import { arenaHolding, type VectorArena } from '../simd/arena.js';

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
    if (arena && arena.owns(vr) && arena.owns(rs) && (col.length === 0 || arena.owns(col))) {
      if (vi === null)
        arena.wasm.csrReal(y.byteOffset, x.byteOffset, rs.byteOffset, col.byteOffset, vr.byteOffset, lo, hi);
      else if (arena.owns(vi))
        arena.wasm.csrComplex(
          y.byteOffset,
          x.byteOffset,
          rs.byteOffset,
          col.byteOffset,
          vr.byteOffset,
          vi.byteOffset,
          lo,
          hi,
        );
      else this.applyPlain(x, y, lo, hi);
      return;
    }
    this.applyPlain(x, y, lo, hi);
  }

  // Two running sums take a row's terms in turn (the first gets terms 0, 2, 4, ...), as the
  // WebAssembly loop does: half the wait on each addition, and the same bits in both.
  private applyPlain(x: Float64Array, y: Float64Array, lo: number, hi: number): void {
    const rs = this.rowStart;
    const col = this.columns;
    const vr = this.valuesRe;
    const vi = this.valuesIm;
    if (vi === null) {
      for (let r = lo; r < hi; r++) {
        let acc0 = 0;
        let acc1 = 0;
        const end = rs[r + 1];
        for (let k = rs[r]; k < end; k++) {
          const next = acc0 + vr[k] * x[col[k]];
          acc0 = acc1;
          acc1 = next;
        }
        y[r] = acc0 + acc1;
      }
      return;
    }
    for (let r = lo; r < hi; r++) complexRowInto(y, r, x, 0, col, vr, vi, rs[r], rs[r + 1], 0, 0);
  }
}

/**
 * y[at] (complex, interleaved) = (re0, im0) + sum over k in [start, end) of (vr[k] + i vi[k])
 * x[offset + col[k]], the terms taken by two alternating sums (the first starts from (re0, im0)),
 * as the WebAssembly loops add them: the plain loop of complex stored rows and of the pinned
 * block pass.
 */
export function complexRowInto(
  y: Float64Array,
  at: number,
  x: Float64Array,
  offset: number,
  col: Int32Array,
  vr: Float64Array,
  vi: Float64Array,
  start: number,
  end: number,
  re0: number,
  im0: number,
): void {
  let re1 = 0;
  let im1 = 0;
  for (let k = start; k < end; k++) {
    const c = 2 * (offset + col[k]);
    const hr = vr[k];
    const hi = vi[k];
    const xr = x[c];
    const xi = x[c + 1];
    const nextRe = re0 + (hr * xr - hi * xi);
    const nextIm = im0 + (hr * xi + hi * xr);
    re0 = re1;
    im0 = im1;
    re1 = nextRe;
    im1 = nextIm;
  }
  y[2 * at] = re0 + re1;
  y[2 * at + 1] = im0 + im1;
}

/** Entries per chunk of a CsrBuilder: filled chunks are kept, never copied to grow. */
const CHUNK = 1 << 20;
/** Rows from which a builder starts on a full chunk (at ten or more entries a row, a sixth of it or more). */
const FULL_CHUNK_ROWS = 1 << 14;

/**
 * Collects matrix elements row by row into fixed-size chunks (a growing array would copy itself
 * again and again: measured as long as building the rows); `finish` copies them once into the
 * final arrays and yields a CsrOperator.
 */
/**
 * Full-size chunks a finished builder hands back for the next one: a sector-by-sector solve builds
 * one matrix after another, and fresh chunks would each fault in new pages (measured: about a tenth
 * of a 10x4 sector solve).
 */
export class ChunkSpares {
  readonly int32: Int32Array[] = [];
  readonly float64: Float64Array[] = [];
}

/** Rows a builder exported: row starts from 0, and the entries in chunks (each exactly filled). */
export interface BuiltRows {
  rows: number;
  rowStart: Float64Array;
  chunks: { columns: Int32Array; re: Float64Array; im: Float64Array | null }[];
}

export class CsrBuilder {
  private readonly done: { columns: Int32Array; re: Float64Array; im: Float64Array | null }[] = [];
  private readonly foreign = new Set<Int32Array>();
  private columns: Int32Array;
  private re: Float64Array;
  private im: Float64Array | null;
  /** Entries in the current chunk, and in the chunks before it. */
  private fill = 0;
  private before = 0;
  private readonly rowStart: Float64Array;
  private row = 0;

  constructor(
    readonly dim: number,
    readonly isComplex: boolean,
    private readonly spares: ChunkSpares | null = null,
  ) {
    this.rowStart = new Float64Array(dim + 1);
    // With spare chunks at hand, or rows enough to fill a good part of one, start on full-size
    // chunks: only those go back to the spares at `finish` (a matrix that grew to half a chunk by
    // doubling left none, so every sector of 10x4 copied and faulted in its rows anew: 6% of its
    // solve), and the untouched pages of a fresh chunk cost nothing. Else small, growing by doubling.
    const spare = spares && spares.int32.length > 0 && spares.float64.length >= (isComplex ? 2 : 1);
    const size = spare || dim >= FULL_CHUNK_ROWS ? CHUNK : 1024;
    this.columns = this.int32Chunk(size);
    this.re = this.float64Chunk(size);
    this.im = isComplex ? this.float64Chunk(size) : null;
  }

  private int32Chunk(size: number): Int32Array {
    return (size === CHUNK && this.spares?.int32.pop()) || new Int32Array(size);
  }

  private float64Chunk(size: number): Float64Array {
    return (size === CHUNK && this.spares?.float64.pop()) || new Float64Array(size);
  }

  /** Adds <row|H|col> to the current row; repeated columns within a row are summed by the product anyway. */
  add(col: number, re: number, im = 0): void {
    if (this.fill === this.columns.length) this.nextChunk();
    this.columns[this.fill] = col;
    this.re[this.fill] = re;
    if (this.im) this.im[this.fill] = im;
    this.fill++;
  }

  endRow(): void {
    this.row++;
    this.rowStart[this.row] = this.before + this.fill;
  }

  /** The rows built so far, to hand to another thread's builder (`absorb`); this builder is done. */
  export(): BuiltRows {
    const chunks = [
      ...this.done,
      {
        columns: this.columns.subarray(0, this.fill),
        re: this.re.subarray(0, this.fill),
        im: this.im ? this.im.subarray(0, this.fill) : null,
      },
    ];
    return { rows: this.row, rowStart: this.rowStart.subarray(0, this.row + 1), chunks };
  }

  /**
   * Appends rows another builder exported (built elsewhere, in order after this one's rows). Their
   * chunks are not handed to the spares at `finish`: the spares would grow by them every build.
   */
  absorb(part: BuiltRows): void {
    this.done.push({
      columns: this.columns.subarray(0, this.fill),
      re: this.re.subarray(0, this.fill),
      im: this.im ? this.im.subarray(0, this.fill) : null,
    });
    this.before += this.fill;
    for (const c of part.chunks) {
      this.done.push(c);
      this.foreign.add(c.columns);
    }
    for (let r = 1; r <= part.rows; r++) this.rowStart[this.row + r] = this.before + part.rowStart[r];
    this.row += part.rows;
    this.before += part.rowStart[part.rows];
    this.columns = new Int32Array(1024);
    this.re = new Float64Array(1024);
    this.im = this.isComplex ? new Float64Array(1024) : null;
    this.fill = 0;
  }

  /**
   * The matrix in shared memory, so a product can be split across worker threads without copying
   * it; with `arena`, in that arena's memory (for the SIMD module), unless it has no room left.
   */
  finish(arena?: VectorArena | null): CsrOperator {
    if (this.row !== this.dim) throw new Error(`CsrBuilder: ${this.row} rows ended, expected ${this.dim}`);
    const size = this.before + this.fill;
    const chunks = [
      ...this.done,
      {
        columns: this.columns.subarray(0, this.fill),
        re: this.re.subarray(0, this.fill),
        im: this.im ? this.im.subarray(0, this.fill) : null,
      },
    ];
    const gather = <T extends Float64Array | Int32Array>(out: T, part: (c: (typeof chunks)[number]) => T): T => {
      let at = 0;
      for (const c of chunks) {
        const piece = part(c);
        out.set(piece, at);
        at += piece.length;
      }
      return out;
    };
    const inArena = arena
      ? {
          rowStart: arena.copyOf(this.rowStart),
          columns: arena.int32Array(size),
          re: arena.float64Array(size),
          im: this.im ? arena.float64Array(size) : null,
        }
      : null;
    const target =
      inArena && inArena.rowStart && inArena.columns && inArena.re && (inArena.im || !this.im)
        ? (inArena as { rowStart: Float64Array; columns: Int32Array; re: Float64Array; im: Float64Array | null })
        : {
            rowStart: sharedCopy(this.rowStart, this.dim + 1, Float64Array),
            columns: new Int32Array(new SharedArrayBuffer(Math.max(1, size) * 4)).subarray(0, size),
            re: new Float64Array(new SharedArrayBuffer(Math.max(1, size) * 8)).subarray(0, size),
            im: this.im ? new Float64Array(new SharedArrayBuffer(Math.max(1, size) * 8)).subarray(0, size) : null,
          };
    gather(target.columns, (c) => c.columns);
    gather(target.re, (c) => c.re);
    if (target.im) gather(target.im, (c) => c.im as Float64Array);
    if (this.spares) {
      for (const c of [...this.done, { columns: this.columns, re: this.re, im: this.im }]) {
        if (c.columns.length !== CHUNK || c.columns.byteOffset !== 0 || this.foreign.has(c.columns)) continue;
        this.spares.int32.push(c.columns);
        this.spares.float64.push(c.re);
        if (c.im) this.spares.float64.push(c.im);
      }
    }
    return new CsrOperator(this.dim, this.isComplex, target.rowStart, target.columns, target.re, target.im);
  }

  private nextChunk(): void {
    if (this.columns.length < CHUNK) {
      // Small matrices grow the first chunk by doubling; only full-size chunks are kept as they are.
      const cap = Math.min(CHUNK, 2 * this.columns.length);
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
      return;
    }
    this.done.push({ columns: this.columns, re: this.re, im: this.im });
    this.before += this.fill;
    this.fill = 0;
    this.columns = this.int32Chunk(CHUNK);
    this.re = this.float64Chunk(CHUNK);
    this.im = this.isComplex ? this.float64Chunk(CHUNK) : null;
  }
}

/** The first `length` entries of `source` in a new array backed by a SharedArrayBuffer. */
export function sharedCopy<T extends Float64Array | Int32Array>(
  source: T,
  length: number,
  kind: { new (buffer: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number },
): T {
  const out = new kind(new SharedArrayBuffer(Math.max(1, length) * kind.BYTES_PER_ELEMENT));
  out.set(source.subarray(0, length));
  return out.length === length ? out : (out.subarray(0, length) as T);
}
