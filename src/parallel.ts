// One matrix-vector product shared by several threads. The operator's data (the pinned diagonal,
// or a stored matrix) lives in SharedArrayBuffers; every thread owns a slice of the output rows.
// The calling thread works on its own slice and waits on an atomic counter, so `apply` stays
// synchronous and the solvers see an ordinary HermitianOperator.

import os from 'node:os';
import { Worker } from 'node:worker_threads';
import type { PinnedBasis } from './basis.js';
import type { Model } from './model.js';
import type { HermitianOperator } from './operator.js';
import { CsrOperator } from './operator/csr.js';
import { PinnedOperator, type BlockPlacement } from './operator/pinned.js';
import { VectorArena } from './simd.js';

/** An operator that can write any slice [lo, hi) of its product on its own. */
export interface RangeOperator extends HermitianOperator {
  applyRange(x: Float64Array, y: Float64Array, lo: number, hi: number): void;
}

/** What a worker needs to rebuild the same operator over the same shared memory. */
export type ProductPayload =
  | { kind: 'pinned'; model: Model; basis: PinnedBasis; diagonal: Float64Array }
  | {
      kind: 'csr';
      dim: number;
      isComplex: boolean;
      rowStart: Float64Array;
      columns: Int32Array;
      valuesRe: Float64Array;
      valuesIm: Float64Array | null;
    };

export function payloadOf(op: HermitianOperator, model?: Model, basis?: PinnedBasis): ProductPayload | null {
  if (op instanceof PinnedOperator && model && basis && op.diagonal.buffer instanceof SharedArrayBuffer) {
    return { kind: 'pinned', model, basis, diagonal: op.diagonal };
  }
  if (op instanceof CsrOperator && op.columns.buffer instanceof SharedArrayBuffer) {
    return { kind: 'csr', dim: op.dim, isComplex: op.isComplex, rowStart: op.rowStart, columns: op.columns, valuesRe: op.valuesRe, valuesIm: op.valuesIm };
  }
  return null;
}

export function operatorFromPayload(p: ProductPayload): RangeOperator {
  if (p.kind === 'pinned') return new PinnedOperator(p.model, p.basis, p.diagonal);
  return new CsrOperator(p.dim, p.isComplex, p.rowStart, p.columns, p.valuesRe, p.valuesIm);
}

// Control words in a shared Int32Array.
const GENERATION = 0; // bumped by the caller for every product
const DONE = 1; // workers that finished the current product
const COMMAND = 2; // RUN or STOP
const READY = 3; // workers that have started
const RUN = 1;
const STOP = 2;

/** Threads to use for one product: all cores when the work is large enough to pay for the hand-offs. */
export function defaultProductThreads(work: number): number {
  const cores = typeof os.availableParallelism === 'function' ? os.availableParallelism() : os.cpus().length;
  return work >= 4e6 ? Math.max(1, Math.min(cores, 8)) : 1;
}

/** Row boundaries that give each thread about the same work (stored nonzeros, or rows). */
function splitRows(op: RangeOperator, threads: number): number[] {
  const bounds = [0];
  if (op instanceof CsrOperator) {
    const total = op.rowStart[op.dim];
    let r = 0;
    for (let t = 1; t < threads; t++) {
      const target = (total * t) / threads;
      while (r < op.dim && op.rowStart[r] < target) r++;
      bounds.push(r);
    }
  } else {
    for (let t = 1; t < threads; t++) bounds.push(Math.floor((op.dim * t) / threads));
  }
  bounds.push(op.dim);
  return bounds;
}

export class ThreadedOperator implements HermitianOperator {
  readonly dim: number;
  readonly isComplex: boolean;
  private readonly control: Int32Array;
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly bounds: number[];
  private readonly workers: Worker[] = [];
  private closed = false;

  constructor(
    private readonly local: RangeOperator,
    payload: ProductPayload,
    readonly threads: number,
  ) {
    this.dim = local.dim;
    this.isComplex = local.isComplex;
    const length = (this.isComplex ? 2 : 1) * this.dim;
    this.control = new Int32Array(new SharedArrayBuffer(16));
    // x and y in an arena, so every thread's slice runs the SIMD kernels; plain shared memory if
    // this runtime has none.
    const arena = VectorArena.create();
    this.x = arena ? arena.vector(length) : new Float64Array(new SharedArrayBuffer(8 * length));
    this.y = arena ? arena.vector(length) : new Float64Array(new SharedArrayBuffer(8 * length));
    // The pinned block pass reads its data from the same memory; place it before the workers start.
    const placement = arena && local instanceof PinnedOperator ? local.placementIn(arena) : null;
    const shared = arena ? { memory: arena.memory, used: arena.used, xAt: this.x.byteOffset, yAt: this.y.byteOffset, length, placement } : null;
    this.bounds = splitRows(local, threads);
    // From dist/src the worker is dist/workers; tests that load src/*.ts directly use the built one.
    const script = new URL(import.meta.url.endsWith('.ts') ? '../dist/workers/product.js' : '../workers/product.js', import.meta.url);
    for (let t = 1; t < threads; t++) {
      const worker = new Worker(script, {
        workerData: { payload, control: this.control, x: this.x, y: this.y, shared, lo: this.bounds[t], hi: this.bounds[t + 1] },
      });
      worker.unref();
      this.workers.push(worker);
    }
    // Workers start on their own threads; wait for them without needing the event loop.
    const deadline = Date.now() + 30_000;
    let ready;
    while ((ready = Atomics.load(this.control, READY)) < this.workers.length) {
      if (Date.now() > deadline) throw new Error('product worker threads did not start within 30 s');
      Atomics.wait(this.control, READY, ready, 100);
    }
  }

  apply(x: Float64Array, y: Float64Array): void {
    const c = this.control;
    this.x.set(x);
    Atomics.store(c, DONE, 0);
    Atomics.store(c, COMMAND, RUN);
    Atomics.add(c, GENERATION, 1);
    Atomics.notify(c, GENERATION);
    this.local.applyRange(this.x, this.y, this.bounds[0], this.bounds[1]);
    const workers = this.workers.length;
    let done;
    while ((done = Atomics.load(c, DONE)) < workers) Atomics.wait(c, DONE, done);
    y.set(this.y);
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    Atomics.store(this.control, COMMAND, STOP);
    Atomics.add(this.control, GENERATION, 1);
    Atomics.notify(this.control, GENERATION);
    for (const w of this.workers) void w.terminate();
  }
}

/** The loop every product worker runs: wait for a generation, write its rows, count itself done. */
export function runProductWorker(data: {
  payload: ProductPayload;
  control: Int32Array;
  x: Float64Array;
  y: Float64Array;
  /** The caller's arena, when x and y live in one: the views are rebuilt over it here. */
  shared: { memory: WebAssembly.Memory; used: number; xAt: number; yAt: number; length: number; placement: BlockPlacement | null } | null;
  lo: number;
  hi: number;
}): void {
  const op = operatorFromPayload(data.payload);
  const c = data.control;
  let { x, y } = data;
  const arena = data.shared ? VectorArena.attach(data.shared.memory, data.shared.used) : null;
  if (arena && data.shared) {
    x = arena.view(data.shared.xAt, data.shared.length);
    y = arena.view(data.shared.yAt, data.shared.length);
    if (data.shared.placement && op instanceof PinnedOperator) op.adopt(arena, data.shared.placement);
  }
  let generation = Atomics.load(c, GENERATION);
  Atomics.add(c, READY, 1);
  Atomics.notify(c, READY);
  for (;;) {
    Atomics.wait(c, GENERATION, generation);
    generation = Atomics.load(c, GENERATION);
    if (Atomics.load(c, COMMAND) === STOP) return;
    op.applyRange(x, y, data.lo, data.hi);
    Atomics.add(c, DONE, 1);
    Atomics.notify(c, DONE);
  }
}

/** The operator itself, or a threaded wrapper when more than one thread is asked and possible. */
export function withThreads(op: HermitianOperator, threads: number, model?: Model, basis?: PinnedBasis): HermitianOperator & { close(): void } {
  const payload = threads > 1 ? payloadOf(op, model, basis) : null;
  if (!payload || !('applyRange' in op)) return Object.assign(op, { close() {} });
  return new ThreadedOperator(op as RangeOperator, payload, threads);
}
