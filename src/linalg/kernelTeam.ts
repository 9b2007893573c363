// The solver's vector kernels shared by several threads. Every vector of a solve lives in one
// arena (a shared WebAssembly memory); each thread runs the same SIMD kernel on its own slice of
// entries and leaves its partial dot products in its own slot, which the calling thread adds up.
// The calling thread takes slice 0 and waits on an atomic counter, so the kernels stay
// synchronous and the solver's loop does not change.

import { VectorArena, type WasmKernels } from '../simd/arena.js';
import { serveTeam, SyncTeam, TEAM_WORDS, workerScript } from '../threads/team.js';
import { BLOCK, SIMD_BLOCK, type KernelHelpers } from './vectorKernels.js';

// Parameters of the current command, after the hand-off's control words (read as Uint32: byte
// offsets may pass 2 GiB).
const P_LENGTH = TEAM_WORDS; // padded vector length in doubles
const P_W = TEAM_WORDS + 1;
const P_TABLE = TEAM_WORDS + 2;
const P_COUNT = TEAM_WORDS + 3;
const P_COEF = TEAM_WORDS + 4;
const P_OUT = TEAM_WORDS + 5; // partial results: slot t at P_OUT + t * P_STRIDE bytes
const P_STRIDE = TEAM_WORDS + 6;
const P_COMPLEX = TEAM_WORDS + 7;
const P_Y = TEAM_WORDS + 8; // combine: coefficients, leading dimension, kept columns, scratch per thread
const P_YS = TEAM_WORDS + 9;
const P_KEEP = TEAM_WORDS + 10;
const P_SCRATCH = TEAM_WORDS + 11;
const P_DOTS = TEAM_WORDS + 12; // subtract: also the dots of the result
const PARAMS = 13;

const PROJECT = 1;
const SUBTRACT = 2; // with the dots of the result when P_OUT is set, and always its squared norm
const COMBINE = 3;

/** Entries [lo, hi) of a padded length for thread t of `threads`: cut on 8-double boundaries (64 bytes). */
function slice(length: number, t: number, threads: number): [number, number] {
  const cut = (k: number) => (k === threads ? length : Math.floor((length * k) / threads / 8) * 8);
  return [cut(t), cut(t + 1)];
}

/** What one thread does for the current command, on its slice. */
function runSlice(
  command: number,
  wasm: WasmKernels,
  memory: WebAssembly.Memory,
  p: Uint32Array,
  t: number,
  threads: number,
): void {
  const [lo, hi] = slice(p[P_LENGTH], t, threads);
  const count = p[P_COUNT];
  const complex = p[P_COMPLEX] === 1;
  if (command === COMBINE) {
    const scratch = p[P_SCRATCH] + t * p[P_STRIDE];
    for (let start = lo; start < hi; start += BLOCK) {
      wasm.combine(p[P_TABLE], count, p[P_Y], p[P_YS], p[P_KEEP], scratch, start, Math.min(start + BLOCK, hi));
    }
    return;
  }
  const slot = p[P_OUT] + t * p[P_STRIDE];
  const out = new Float64Array(memory.buffer, slot, 2 * count + 1);
  out.fill(0);
  if (command === PROJECT) {
    if (complex) wasm.dotsComplex(p[P_W], p[P_TABLE], count, slot, lo, hi);
    else wasm.dotsReal(p[P_W], p[P_TABLE], count, slot, lo, hi);
    return;
  }
  // SUBTRACT: block by block, so the dots of the result read the basis block while it is cached.
  const withDots = p[P_DOTS] === 1;
  let normSquared = 0;
  for (let start = lo; start < hi; start += SIMD_BLOCK) {
    const end = Math.min(start + SIMD_BLOCK, hi);
    if (complex) {
      wasm.subtractComplex(p[P_W], p[P_TABLE], count, p[P_COEF], start, end);
      if (withDots) wasm.dotsComplex(p[P_W], p[P_TABLE], count, slot, start, end);
    } else {
      wasm.subtractReal(p[P_W], p[P_TABLE], count, p[P_COEF], start, end);
      if (withDots) wasm.dotsReal(p[P_W], p[P_TABLE], count, slot, start, end);
    }
    normSquared += wasm.normSquared(p[P_W], start, end);
  }
  out[2 * count] = normSquared;
}

/** Helper threads for one arena's kernels. */
export class KernelTeam implements KernelHelpers {
  private readonly team: SyncTeam;
  private readonly params: Uint32Array;
  private partials: Float64Array | null = null;
  private scratch: Float64Array | null = null;

  private constructor(
    readonly arena: VectorArena,
    readonly threads: number,
  ) {
    const script = workerScript('kernels');
    this.team = new SyncTeam(script, threads, PARAMS, (thread, control) => ({
      memory: arena.memory,
      control,
      thread,
      threads,
    }));
    this.params = new Uint32Array(this.team.control.buffer);
  }

  /** A team of `threads` (the caller included), or null if helpers cannot start here. */
  static start(arena: VectorArena, threads: number): KernelTeam | null {
    if (threads < 2) return null;
    try {
      return new KernelTeam(arena, threads);
    } catch {
      return null;
    }
  }

  /**
   * This team for another solve on its arena: its partial-result and scratch blocks lay in the
   * last solve's part of the arena, which is handed out again, so new ones are taken when needed.
   */
  reuse(): this {
    this.partials = null;
    this.scratch = null;
    return this;
  }

  /** Partial-result slots, one per thread, each of at least `doubles` (rounded to cache lines). */
  /** Null when the arena has no room left: the caller then works on one thread. */
  private slots(doubles: number): { at: number; stride: number } | null {
    const stride = Math.ceil(doubles / 8) * 8;
    if (!this.partials || this.partials.length < stride * this.threads) {
      const partials = this.arena.vector(2 * stride * this.threads);
      if (!this.arena.owns(partials)) return null;
      this.partials = partials;
    }
    return { at: this.partials.byteOffset, stride: 8 * stride };
  }

  private run(command: number): void {
    this.team.run(command, () => runSlice(command, this.arena.wasm, this.arena.memory, this.params, 0, this.threads));
  }

  /** Adds thread t's partials (first `n` doubles of each slot) into `into`. */
  private gather(n: number, into: Float64Array, offset: number): void {
    const p = this.params;
    const stride = p[P_STRIDE] / 8;
    const base = (p[P_OUT] - (this.partials as Float64Array).byteOffset) / 8;
    const partials = this.partials as Float64Array;
    for (let t = 0; t < this.threads; t++) {
      const at = base + t * stride + offset;
      for (let i = 0; i < n; i++) into[i] += partials[at + i];
    }
  }

  /** The parameters a dot-product sweep of w against the set needs, with partial-result slots. */
  private sweep(w: Float64Array, length: number, table: number, count: number, isComplex: boolean): boolean {
    const p = this.params;
    const slots = this.slots(2 * count + 1);
    if (!slots) return false;
    const { at, stride } = slots;
    p[P_LENGTH] = length;
    p[P_W] = w.byteOffset;
    p[P_TABLE] = table;
    p[P_COUNT] = count;
    p[P_OUT] = at;
    p[P_STRIDE] = stride;
    p[P_COMPLEX] = isComplex ? 1 : 0;
    return true;
  }

  /** coef[0..) = <set_i, w> over all threads' slices; `table` holds the set's pointers. False: not done (no room). */
  project(
    w: Float64Array,
    length: number,
    table: number,
    count: number,
    isComplex: boolean,
    coef: Float64Array,
  ): boolean {
    if (!this.sweep(w, length, table, count, isComplex)) return false;
    this.run(PROJECT);
    const n = isComplex ? 2 * count : count;
    coef.fill(0, 0, n);
    this.gather(n, coef, 0);
    return true;
  }

  /** w -= sum_i coef_i set_i; returns ||w||^2 (null: not done, no room); fills `nextCoef` with the new w's dots when given. */
  subtract(
    w: Float64Array,
    length: number,
    table: number,
    count: number,
    isComplex: boolean,
    coef: Float64Array,
    nextCoef: Float64Array | null,
  ): number | null {
    if (!this.sweep(w, length, table, count, isComplex)) return null;
    this.params[P_COEF] = coef.byteOffset;
    this.params[P_DOTS] = nextCoef ? 1 : 0;
    this.run(SUBTRACT);
    const n = isComplex ? 2 * count : count;
    if (nextCoef) {
      nextCoef.fill(0, 0, n);
      this.gather(n, nextCoef, 0);
    }
    const norm = new Float64Array(1);
    this.gather(1, norm, 2 * count);
    return norm[0];
  }

  /** The restart combination, each thread on its slice with its own scratch block. False: not done (no room). */
  combine(length: number, table: number, size: number, y: Float64Array, ys: number, keep: number): boolean {
    const p = this.params;
    const perThread = keep * BLOCK;
    if (!this.scratch || this.scratch.length < perThread * this.threads) {
      const scratch = this.arena.vector(perThread * this.threads);
      if (!this.arena.owns(scratch)) return false;
      this.scratch = scratch;
    }
    p[P_LENGTH] = length;
    p[P_TABLE] = table;
    p[P_COUNT] = size;
    p[P_Y] = y.byteOffset;
    p[P_YS] = ys;
    p[P_KEEP] = keep;
    p[P_SCRATCH] = this.scratch.byteOffset;
    p[P_STRIDE] = 8 * perThread;
    this.run(COMBINE);
    return true;
  }

  close(): void {
    this.team.close();
  }
}

/** A helper thread: attach to the arena, then run its slice of every command until told to stop. */
export function runKernelWorker(data: {
  memory: WebAssembly.Memory;
  control: Int32Array;
  thread: number;
  threads: number;
}): void {
  const arena = VectorArena.attach(data.memory, 0);
  const p = new Uint32Array(data.control.buffer);
  serveTeam(data.control, arena !== null, (command) =>
    runSlice(command, arena!.wasm, data.memory, p, data.thread, data.threads),
  );
}
