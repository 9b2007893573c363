// WebAssembly SIMD kernels and the shared memory they work on. Vectors that numerical loops
// sweep many times (the Lanczos basis, the operator's input and output) are allocated in a
// VectorArena: one shared WebAssembly memory, seen from JavaScript as ordinary Float64Array views,
// so the same vector can be handed to plain loops or to the SIMD kernels (src/simd/vector.wat).
// Any module may ask which arena, if any, holds a given vector (`arenaHolding`).

import { VECTOR_WASM_BASE64 } from './vectorWasm.js';

const PAGE = 65536;
const MAX_PAGES = 65536;
/** Vectors start on cache-line boundaries. */
const ALIGN = 64;

export interface WasmKernels {
  dotsReal(w: number, set: number, count: number, out: number, start: number, end: number): void;
  dotsComplex(w: number, set: number, count: number, out: number, start: number, end: number): void;
  subtractReal(w: number, set: number, count: number, coef: number, start: number, end: number): void;
  subtractComplex(w: number, set: number, count: number, coef: number, start: number, end: number): void;
  normSquared(w: number, start: number, end: number): number;
  combine(
    set: number,
    size: number,
    y: number,
    ys: number,
    keep: number,
    scratch: number,
    start: number,
    end: number,
  ): void;
  /** y[0..count) += h x[0..count), pointers at the first entries. */
  axpy(y: number, x: number, h: number, count: number): void;
  scale(y: number, s: number, count: number): void;
  /** Complex y += (hr + i hi) x over `count` interleaved complex entries. */
  caxpy(y: number, x: number, hr: number, hi: number, count: number): void;
  csrReal(y: number, x: number, rs: number, col: number, val: number, lo: number, hi: number): void;
  csrComplex(y: number, x: number, rs: number, col: number, re: number, im: number, lo: number, hi: number): void;
  /** The pinned operator's block pass over rows [lo, hi) (see vector.wat). */
  blockPassReal(
    y: number,
    x: number,
    diag: number,
    rs: number,
    col: number,
    val: number,
    B: number,
    lo: number,
    hi: number,
  ): void;
  blockPassComplex(
    y: number,
    x: number,
    diag: number,
    rs: number,
    col: number,
    re: number,
    im: number,
    B: number,
    lo: number,
    hi: number,
  ): void;
}

/** Which arena owns a buffer (every buffer an arena's memory has shown, after each growth). */
const owners = new WeakMap<ArrayBufferLike, VectorArena>();

/** The arena holding both vectors, or null (then plain loops must serve). */
export function arenaHolding(x: Float64Array | Int32Array, y: Float64Array | Int32Array): VectorArena | null {
  const arena = owners.get(x.buffer);
  return arena && owners.get(y.buffer) === arena ? arena : null;
}

let compiled: WebAssembly.Module | null | undefined;
/** See VectorArena.acquire: module state is per thread, so each thread keeps its own. */
let idleArena: VectorArena | null = null;

function kernelModule(): WebAssembly.Module | null {
  if (compiled === undefined) {
    try {
      compiled = new WebAssembly.Module(Buffer.from(VECTOR_WASM_BASE64, 'base64'));
    } catch {
      // No SIMD or no shared memory in this runtime: the plain loops serve.
      compiled = null;
    }
  }
  return compiled;
}

/**
 * Vectors in one shared WebAssembly memory, handed out as Float64Array views. Lengths are padded
 * to an even number of doubles (the padding stays zero) so the SIMD loops need no scalar tail.
 * Allocation is a bump pointer: nothing is freed one by one, but `release(mark)` hands back all
 * that came after a `mark` (a solve releases its vectors once copied out; a sector solve releases
 * each sector's matrix). When the memory cannot grow (wasm32 stops at 4 GiB), `vector` returns an
 * ordinary Float64Array and the kernels fall back to plain loops for sets that hold one.
 */
export class VectorArena {
  readonly memory: WebAssembly.Memory;
  readonly wasm: WasmKernels;
  private readonly buffers = new Set<ArrayBufferLike>();
  private top: number;
  private table: Int32Array | null = null;

  private constructor(
    module: WebAssembly.Module,
    memory: WebAssembly.Memory,
    top: number,
    /** False for an arena attached to another thread's memory: it only runs kernels. */
    readonly allocates: boolean,
  ) {
    this.memory = memory;
    this.wasm = new WebAssembly.Instance(module, { env: { memory } }).exports as unknown as WasmKernels;
    this.top = top;
    this.track();
  }

  private track(): void {
    this.buffers.add(this.memory.buffer);
    owners.set(this.memory.buffer, this);
  }

  /** An arena, or null when this runtime cannot run the kernels. */
  static create(): VectorArena | null {
    const module = kernelModule();
    if (!module) return null;
    try {
      return new VectorArena(module, new WebAssembly.Memory({ initial: 1, maximum: MAX_PAGES, shared: true }), 0, true);
    } catch {
      return null;
    }
  }

  /**
   * An arena for one piece of work: this thread's idle one when it has one, else a new one. A
   * reused arena's pages are already mapped, so a scan's points do not each pay page faults for
   * fresh memory (measured: a third of a small point's time). Hand it back with `recycle`.
   */
  static acquire(): VectorArena | null {
    const spare = idleArena;
    idleArena = null;
    return spare ?? VectorArena.create();
  }

  /**
   * Hands this arena back for the thread's next `acquire`; every view of it must be dropped. One
   * idle arena is kept per thread (the larger), so a thread holds at most what its largest work needed.
   */
  recycle(): void {
    if (!this.allocates) return;
    this.release(0);
    // The arena outlives this call on purpose: it is the thread's spare for the next acquire.
    // eslint-disable-next-line @typescript-eslint/no-this-alias
    if (!idleArena || idleArena.memory.buffer.byteLength < this.memory.buffer.byteLength) idleArena = this;
  }

  /**
   * The kernels over a memory another thread created (it arrives through workerData), for views
   * that thread already placed in it. Only one thread may allocate in a memory: an attached arena
   * is for running kernels on existing views (new vectors would go above `used` bytes). Null if
   * this runtime cannot run the kernels.
   */
  static attach(memory: WebAssembly.Memory, used: number): VectorArena | null {
    const module = kernelModule();
    if (!module) return null;
    try {
      return new VectorArena(module, memory, used, false);
    } catch {
      return null;
    }
  }

  /** Bytes handed out so far (what `attach` on another thread must not reuse). */
  get used(): number {
    return this.top;
  }

  /** A view of `length` doubles at byte offset `at`, for vectors placed by another thread. */
  view(at: number, length: number): Float64Array {
    if (!this.buffers.has(this.memory.buffer)) this.track(); // grown by the thread that allocates
    return new Float64Array(this.memory.buffer, at, length);
  }

  int32View(at: number, length: number): Int32Array {
    if (!this.buffers.has(this.memory.buffer)) this.track();
    return new Int32Array(this.memory.buffer, at, length);
  }

  private reserve(bytes: number): number | null {
    if (!this.allocates) return null;
    const at = Math.ceil(this.top / ALIGN) * ALIGN;
    const needed = at + bytes;
    const have = this.memory.buffer.byteLength;
    if (needed > have) {
      const pages = Math.ceil((needed - have) / PAGE);
      if (have / PAGE + pages > MAX_PAGES) return null;
      try {
        this.memory.grow(pages);
      } catch {
        return null;
      }
      this.track();
    }
    this.top = needed;
    if (needed > this.highWater) this.highWater = needed;
    return at;
  }

  /** A zeroed vector of `length` doubles (padded to even in the arena), or a plain array when full. */
  vector(length: number): Float64Array {
    const padded = length + (length & 1);
    const before = this.highWater;
    const at = this.reserve(8 * padded);
    if (at === null) return new Float64Array(length);
    // Fresh pages are zero; reused ones are cleared, padding included (the kernels sum it).
    if (at < before) new Float64Array(this.memory.buffer, at, padded).fill(0);
    return new Float64Array(this.memory.buffer, at, length);
  }

  /**
   * Zeroed arrays in the arena, or null when there is no room. Memory handed out again (after a
   * release, or in a recycled arena) is cleared first: builders that write only their nonzero
   * parts (the imaginary parts of real entries, say) must not read an earlier solve's data.
   */
  float64Array(length: number): Float64Array | null {
    return this.zeroed(8 * length, (at) => new Float64Array(this.memory.buffer, at, length));
  }

  int32Array(length: number): Int32Array | null {
    return this.zeroed(4 * length, (at) => new Int32Array(this.memory.buffer, at, length));
  }

  private zeroed<T extends Float64Array | Int32Array>(bytes: number, view: (at: number) => T): T | null {
    const before = this.highWater;
    const at = this.reserve(bytes);
    if (at === null) return null;
    const array = view(at);
    if (at < before) array.fill(0);
    return array;
  }

  /** A copy of a constant array in the arena (for kernels that read it), or null when there is no room. */
  copyOf<T extends Float64Array | Int32Array>(source: T): T | null {
    const at = this.reserve(source.byteLength);
    if (at === null) return null;
    const copy = (
      source instanceof Float64Array
        ? new Float64Array(this.memory.buffer, at, source.length)
        : new Int32Array(this.memory.buffer, at, source.length)
    ) as T;
    copy.set(source);
    return copy;
  }

  private int32s(count: number): Int32Array {
    const at = this.reserve(4 * count);
    if (at === null) throw new RangeError('vector arena: no room for a pointer table');
    return new Int32Array(this.memory.buffer, at, count);
  }

  /** The allocation point, to hand back with `release` once everything allocated after it is dropped. */
  mark(): number {
    return this.top;
  }

  /** Frees everything allocated since `mark` (views of it must no longer be used). */
  release(mark: number): void {
    if (mark <= this.top) this.top = mark;
    this.table = null;
    this.epoch++;
  }

  /** Bumped by every `release`: offsets recorded earlier may now point at reused memory. */
  epoch = 0;
  /** End of the memory ever handed out: below it, released memory holds old data. */
  private highWater = 0;

  owns(v: Float64Array | Int32Array): boolean {
    return this.buffers.has(v.buffer);
  }

  ownsAll(set: Float64Array[], count: number): boolean {
    for (let i = 0; i < count; i++) if (!this.buffers.has(set[i].buffer)) return false;
    return true;
  }

  /** Writes the byte offsets of set[0..count) to the pointer table; returns the table's offset. */
  pointers(set: Float64Array[], count: number): number {
    let table = this.table;
    if (!table || table.length < count) table = this.table = this.int32s(Math.max(64, 2 * count));
    for (let i = 0; i < count; i++) table[i] = set[i].byteOffset;
    return table.byteOffset;
  }
}
