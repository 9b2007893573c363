// One matrix-vector product shared by several threads. The operator's data (the pinned diagonal,
// or a stored matrix) lives in SharedArrayBuffers; the output rows come in chunks of about equal
// work, which the threads take from a shared counter until none is left, so a thread on a slower
// or busier core simply takes fewer. The calling thread takes chunks too and then waits on an
// atomic counter, so `apply` stays synchronous and the solvers see an ordinary HermitianOperator.
// Each row is summed by one thread, start to end: the result has the same bits however the
// chunks fall.

import { MessageChannel, receiveMessageOnPort, type MessagePort } from 'node:worker_threads';
import type { PinnedBasis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
import type { HermitianOperator } from './hermitian.js';
import { CsrOperator } from './csr.js';
import { PinnedOperator, type BlockPlacement } from './pinned.js';
import { arenaHolding, VectorArena } from '../simd/arena.js';
import { coreCount } from '../threads/cores.js';
import { serveTeam, SyncTeam, TEAM_WORDS, workerScript } from '../threads/team.js';

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
    return {
      kind: 'csr',
      dim: op.dim,
      isComplex: op.isComplex,
      rowStart: op.rowStart,
      columns: op.columns,
      valuesRe: op.valuesRe,
      valuesIm: op.valuesIm,
    };
  }
  return null;
}

export function operatorFromPayload(p: ProductPayload): RangeOperator {
  if (p.kind === 'pinned') return new PinnedOperator(p.model, p.basis, p.diagonal);
  return new CsrOperator(p.dim, p.isComplex, p.rowStart, p.columns, p.valuesRe, p.valuesIm);
}

// After the hand-off's control words: byte offsets of this product's x and y in the arena, and
// the next chunk of rows to take.
const X_AT = TEAM_WORDS;
const Y_AT = TEAM_WORDS + 1;
const NEXT_CHUNK = TEAM_WORDS + 2;
const PARAMS = 3;
const RUN = 1;
/** A kept team's helpers take the next operator's binding from their message port. */
const BIND = 2;
/**
 * Chunks of rows per thread: enough that the last one taken leaves the others little to wait for
 * (this machine's two cores differ by up to 1.9x on vector loops, see bench/cores.ts), few enough
 * that taking one costs nothing against its rows.
 */
const CHUNKS_PER_THREAD = 16;

/** Takes chunks of rows from the shared counter and runs `rows` on each, until none is left. */
function takeChunks(control: Int32Array, chunks: Int32Array, rows: (lo: number, hi: number) => void): void {
  const count = chunks.length - 1;
  for (let c = Atomics.add(control, NEXT_CHUNK, 1); c < count; c = Atomics.add(control, NEXT_CHUNK, 1))
    rows(chunks[c], chunks[c + 1]);
}

/** Threads to use for one product: all cores when the work is large enough to pay for the hand-offs. */
export function defaultProductThreads(work: number): number {
  return work >= 4e6 ? Math.min(coreCount(), 8) : 1;
}

/** Row boundaries that give each part about the same work (stored nonzeros, or rows). */
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

/** Where a worker finds the shared operator's pieces in the arena's memory (byte offsets). */
interface SharedArena {
  memory: WebAssembly.Memory;
  used: number;
  length: number;
  placement: BlockPlacement | null;
  /** A stored matrix that lives in the arena: its arrays, rebuilt as views there. */
  csr: { rowStart: number; columns: number; re: number; im: number | null; nonzeros: number } | null;
}

/** What a product helper needs for one operator: its data, the vectors and the chunks of rows. */
interface ProductBinding {
  payload: ProductPayload;
  x: Float64Array;
  y: Float64Array;
  /** The caller's arena, when there is one: vectors and operator data are views over its memory. */
  shared: SharedArena | null;
  chunks: Int32Array;
}

/**
 * The helper threads of a split product, serving one operator at a time: each ThreadedOperator
 * hands them its binding through their ports. A ThreadedOperator starts its own team, or borrows
 * one the caller keeps for operator after operator (a sector-by-sector solve builds one matrix
 * per sector): starting helpers costs about 0.1 s, and a fresh thread's first products run in
 * WebAssembly's baseline code until it is recompiled. Closing a borrower leaves the team running.
 */
export class ProductTeam {
  readonly team: SyncTeam;
  private readonly ports: MessagePort[] = [];
  /** The ThreadedOperator bound now (one at a time). */
  bound: object | null = null;

  private constructor(readonly threads: number) {
    // Helper t (1 <= t < threads) listens on channels[t - 1].
    const channels = Array.from({ length: threads - 1 }, () => new MessageChannel());
    try {
      this.team = new SyncTeam(
        workerScript('product'),
        threads,
        PARAMS,
        (thread, control) => ({ control, port: channels[thread - 1].port2 }),
        (thread) => [channels[thread - 1].port2],
      );
    } catch (e) {
      for (const channel of channels) channel.port1.close();
      throw e;
    }
    for (const channel of channels) this.ports.push(channel.port1);
  }

  /** Throws when the helpers cannot start (see SyncTeam). */
  static create(threads: number): ProductTeam {
    return new ProductTeam(threads);
  }

  /** Null when the helpers cannot start (the caller then works without a kept team). */
  static start(threads: number): ProductTeam | null {
    try {
      return new ProductTeam(threads);
    } catch {
      return null;
    }
  }

  bind(binding: ProductBinding, owner: object): void {
    for (const port of this.ports) port.postMessage(binding);
    this.team.run(BIND, () => {});
    this.bound = owner;
  }

  close(): void {
    this.team.close();
    for (const port of this.ports) port.close();
  }
}

export class ThreadedOperator implements HermitianOperator {
  readonly dim: number;
  readonly isComplex: boolean;
  /**
   * The arena the threads read x and write y in. Vectors the caller keeps there (pass it to the
   * solver as `arena`) are multiplied in place; others are copied in and out.
   */
  readonly arena: VectorArena | null;
  private readonly team: SyncTeam;
  private readonly offsets: Uint32Array;
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  /** Row boundaries of the chunks, shared with the helpers. */
  private readonly chunks: Int32Array;
  private readonly ownsArena: boolean;
  /** The helpers serving this operator: a kept team lent by the caller, or its own. */
  private readonly helpers: ProductTeam;
  private readonly ownsHelpers: boolean;

  /** With `kept` (of as many threads, free), its helpers serve this operator until it closes; else it starts its own. */
  constructor(
    private readonly local: RangeOperator,
    payload: ProductPayload,
    readonly threads: number,
    kept: ProductTeam | null = null,
  ) {
    this.dim = local.dim;
    this.isComplex = local.isComplex;
    const length = (this.isComplex ? 2 : 1) * this.dim;
    // A stored matrix built in an arena brings its own; otherwise a new one, so every thread's
    // slice runs the SIMD kernels (plain shared memory if this runtime has none).
    const home = local instanceof CsrOperator && local.arena?.allocates ? local.arena : null;
    const arena = home ?? VectorArena.acquire();
    this.arena = arena;
    this.ownsArena = home === null;
    this.x = arena ? arena.vector(length) : new Float64Array(new SharedArrayBuffer(8 * length));
    this.y = arena ? arena.vector(length) : new Float64Array(new SharedArrayBuffer(8 * length));
    // The pinned block pass reads its data from the same memory; place it before the workers start.
    const placement = arena && local instanceof PinnedOperator ? local.placementIn(arena) : null;
    const csr =
      home && local instanceof CsrOperator
        ? {
            rowStart: local.rowStart.byteOffset,
            columns: local.columns.byteOffset,
            re: local.valuesRe.byteOffset,
            im: local.valuesIm ? local.valuesIm.byteOffset : null,
            nonzeros: local.columns.length,
          }
        : null;
    const shared: SharedArena | null = arena
      ? { memory: arena.memory, used: arena.used, length, placement, csr }
      : null;
    const bounds = splitRows(local, Math.min(local.dim, CHUNKS_PER_THREAD * threads));
    this.chunks = new Int32Array(new SharedArrayBuffer(4 * bounds.length));
    this.chunks.set(bounds);
    const lent = kept && kept.threads === threads && kept.bound === null ? kept : null;
    this.helpers = lent ?? ProductTeam.create(threads);
    this.ownsHelpers = lent === null;
    this.team = this.helpers.team;
    this.helpers.bind({ payload, x: this.x, y: this.y, shared, chunks: this.chunks }, this);
    this.offsets = new Uint32Array(this.team.control.buffer);
  }

  apply(x: Float64Array, y: Float64Array): void {
    // A kept team's helpers serve whichever operator was bound last, over its memory.
    if (this.helpers.bound !== this) throw new Error('a threaded product was applied after it was closed');
    const inPlace = this.arena !== null && arenaHolding(x, y) === this.arena;
    const xs = inPlace ? x : this.x;
    const ys = inPlace ? y : this.y;
    if (!inPlace) xs.set(x);
    this.offsets[X_AT] = xs.byteOffset;
    this.offsets[Y_AT] = ys.byteOffset;
    Atomics.store(this.team.control, NEXT_CHUNK, 0);
    this.team.run(RUN, () =>
      takeChunks(this.team.control, this.chunks, (lo, hi) => this.local.applyRange(xs, ys, lo, hi)),
    );
    if (!inPlace) y.set(ys);
  }

  close(): void {
    if (this.helpers.bound === this) this.helpers.bound = null;
    if (this.ownsHelpers) this.helpers.close();
    if (this.ownsArena) this.arena?.recycle();
  }
}

/**
 * The loop every product worker runs: wait for a generation, write the chunks it takes, count
 * itself done. Its operator comes with each BIND command, from its port.
 */
export function runProductWorker(data: { control: Int32Array; port: MessagePort }): void {
  const c = data.control;
  const offsets = new Uint32Array(c.buffer);
  let bound: { op: RangeOperator; arena: VectorArena | null; binding: ProductBinding } | null = null;
  let x: Float64Array = new Float64Array(0);
  let y = x;
  let xAt = -1;
  let yAt = -1;
  const bind = (binding: ProductBinding): void => {
    const shared = binding.shared;
    const arena = shared ? VectorArena.attach(shared.memory, shared.used) : null;
    let payload = binding.payload;
    if (arena && shared?.csr && payload.kind === 'csr') {
      const m = shared.csr;
      payload = {
        ...payload,
        rowStart: arena.view(m.rowStart, payload.dim + 1),
        columns: arena.int32View(m.columns, m.nonzeros),
        valuesRe: arena.view(m.re, m.nonzeros),
        valuesIm: m.im === null ? null : arena.view(m.im, m.nonzeros),
      };
    }
    const op = operatorFromPayload(payload);
    if (arena && shared?.placement && op instanceof PinnedOperator) op.adopt(arena, shared.placement);
    bound = { op, arena, binding };
    x = binding.x;
    y = binding.y;
    xAt = -1;
    yAt = -1;
  };
  serveTeam(c, true, (command) => {
    if (command === BIND) {
      // Without a binding (none came, or it could not be set up) this helper takes no rows, and
      // the caller's thread takes them all; it must still count itself done, or the caller waits.
      bound = null;
      try {
        const message = receiveMessageOnPort(data.port);
        if (message) bind(message.message as ProductBinding);
      } catch {
        bound = null;
      }
      return;
    }
    if (!bound) return;
    const { op, arena, binding } = bound;
    const shared = binding.shared;
    if (arena && shared && (offsets[X_AT] !== xAt || offsets[Y_AT] !== yAt)) {
      xAt = offsets[X_AT];
      yAt = offsets[Y_AT];
      x = arena.view(xAt, shared.length);
      y = arena.view(yAt, shared.length);
    }
    takeChunks(c, binding.chunks, (lo, hi) => op.applyRange(x, y, lo, hi));
  });
}

/** The operator itself, or a threaded wrapper when more than one thread is asked and possible. */
export function withThreads(
  op: HermitianOperator,
  threads: number,
  model?: Model,
  basis?: PinnedBasis,
  kept: ProductTeam | null = null,
): HermitianOperator & { close(): void } {
  const payload = threads > 1 ? payloadOf(op, model, basis) : null;
  if (!payload || !('applyRange' in op)) return Object.assign(op, { close() {} });
  return new ThreadedOperator(op as RangeOperator, payload, threads, kept);
}
