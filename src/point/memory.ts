// Memory estimates made before anything large is allocated, and the limit they are checked against.

import os from 'node:os';
import { ResourceError } from '../errors/errors.js';
import { formatBytes } from '../format/bytes.js';
import type { Model } from '../model/model.js';
import { orbitMapCount, pointGroupInUse, translationSizes, type SymmetryName } from '../symmetry/group.js';

const BYTES_PER_DOUBLE = 8;
/**
 * Node itself with this engine's modules loaded (measured: 50 MiB resident), and the code compiled,
 * the WebAssembly kernels instantiated and the plan made by a solve of a few thousand states (up
 * to 62 MiB at the peak of an 8x3 chain).
 */
export const RUNTIME_BASELINE_BYTES = 64 * 1024 * 1024;
/** Each helper thread's own V8 isolate and modules (measured: 17 MiB for the two of a 12x3 full-space solve). */
export const HELPER_THREAD_BYTES = 12 * 1024 * 1024;
/**
 * Typed arrays that a sector-by-sector solve leaves behind (each sector's matrix build chunks and
 * vectors outside the arena) are freed only by a garbage collection, which V8 starts once such
 * memory has grown by its soft limit (64 MiB). Measured, what waits for it: 29 to 44 MiB on an
 * 11x3 chain (15 MiB of live data), less beside smaller data; so four times the live data, at
 * most this much.
 */
export const SECTOR_GARBAGE_BYTES = 48 * 1024 * 1024;

/** The default memory limit: a share of physical memory that leaves the machine usable. */
export function defaultMemoryLimit(): number {
  return Math.floor(os.totalmem() * 0.6);
}

export interface MemoryEstimate {
  totalBytes: number;
  parts: Record<string, number>;
}

/**
 * Peak memory of one solve: the runtime and its helper threads, the operator's storage, the
 * Krylov basis and work vectors of the eigensolver, the returned eigenvectors (copied out of the
 * arena, both alive until it is recycled), and the observables' scratch.
 */
export function estimateSolveMemory(opts: {
  dim: number;
  isComplex: boolean;
  operatorBytes: number;
  krylovVectors: number;
  states: number;
  denseThreshold: number;
  /** Threads for one product: each beyond the first means a product helper and a vector-kernel helper. */
  threads?: number;
  /** Observables of each state of a pinned chain (solve.observables = "each"): one more probability array, for one state's mixture at a time. */
  eachState?: boolean;
  /** Entanglement of site lists that are not sites 0..|A|-1: each ground state is copied with its sites reordered. */
  reorderedStates?: number;
}): MemoryEstimate {
  const vector = opts.dim * (opts.isComplex ? 2 : 1) * BYTES_PER_DOUBLE;
  const parts: Record<string, number> = { runtime: RUNTIME_BASELINE_BYTES, operator: opts.operatorBytes };
  const helpers = opts.dim > opts.denseThreshold ? 2 * Math.max(0, (opts.threads ?? 1) - 1) : 0;
  if (helpers > 0) parts.helper_threads = helpers * HELPER_THREAD_BYTES;
  if (opts.dim <= opts.denseThreshold) {
    // Dense matrix, its real embedding when complex, and the decomposition's copies.
    const n = opts.isComplex ? 2 * opts.dim : opts.dim;
    parts.dense = 4 * n * n * BYTES_PER_DOUBLE;
  } else {
    parts.krylov = (opts.krylovVectors + 3) * vector;
  }
  parts.eigenvectors = 2 * opts.states * vector;
  parts.observables = opts.dim * BYTES_PER_DOUBLE;
  if (opts.eachState) parts.state_observables = opts.dim * BYTES_PER_DOUBLE;
  if ((opts.reorderedStates ?? 0) > 0) parts.reordered_states = opts.reorderedStates! * vector;
  let totalBytes = 0;
  for (const v of Object.values(parts)) totalBytes += v;
  return { totalBytes, parts };
}

/** `limitName`: how the user sets the limit (the command line passes its flag), named in the advice. */
export function assertWithinMemory(estimate: MemoryEstimate, limit: number, what: string, limitName?: string): void {
  if (estimate.totalBytes > limit) {
    const raise = limitName ? `raise it with ${limitName}` : 'raise it';
    throw new ResourceError(
      `${what} needs an estimated ${formatBytes(estimate.totalBytes)}, more than the memory limit ${formatBytes(limit)}` +
        ` (${raise}, or use symmetry sectors / fewer states)`,
    );
  }
}

/** Average number of stored elements per column of the pinned Hamiltonian (diagonal included). */
export function pinnedColumnsPerState(model: Model): number {
  const N = model.levels;
  let offDiagonal = 0;
  for (let a = 0; a < N; a++)
    for (let b = 0; b < N; b++)
      if (a !== b && (model.localRe[a * N + b] !== 0 || model.localIm[a * N + b] !== 0)) offDiagonal++;
  let links = 0;
  for (const c of model.exchangeWeights) if (c !== 0) links++;
  // a site in level b tunnels along the nonzero entries of column b: offDiagonal/N on average;
  // a pair exchanges when its two levels are adjacent on a weighted link: 2*links/N^2 of configurations
  return 1 + (model.sites * offDiagonal) / N + (model.exchangePairs.count * 2 * links) / (N * N);
}

/** Fraction of pinned states in the most populated total-level sector: (1+x+...+x^(N-1))^L's largest coefficient / N^L. */
export function largestChargeFraction(sites: number, levels: number): number {
  let poly = [1];
  for (let i = 0; i < sites; i++) {
    const next = new Array<number>(poly.length + levels - 1).fill(0);
    for (let q = 0; q < poly.length; q++) for (let n = 0; n < levels; n++) next[q + n] += poly[q] / levels;
    poly = next;
  }
  return Math.max(...poly);
}

/**
 * Size of the largest sector (with a margin), whether its arithmetic is complex (momentum sectors
 * are), its vectors' length in doubles, and its stored matrix's nonzeros, before building anything.
 */
export function largestSector(
  dim: number,
  model: Model,
  used: Record<SymmetryName, boolean>,
): { sectorDim: number; complex: boolean; entries: number; nnz: number } {
  // a lattice's translations number the product of its periodic sizes (a ladder's L, not its 2L sites)
  const sizes = used.translation ? translationSizes(model) : null;
  const translations = used.translation ? (sizes ? sizes.reduce((a, b) => a * b, 1) : model.sites) : 1;
  const flip = used.level_flip && !used.charge ? 2 : 1;
  const fraction = used.charge ? largestChargeFraction(model.sites, model.levels) : 1;
  // Momentum sectors other than 0 and pi are not split by parity (nor by a point group, at momenta
  // it does not fix), so they are the largest; without translations the whole group splits.
  const parityHalves = used.reflection && !used.translation ? 2 : 1;
  const point = used.translation ? null : pointGroupInUse(used, model);
  const pointSplit = point ? point.orders.reduce((a, b) => a * b, 1) : 1;
  const sectorDim = Math.ceil((dim * fraction * 1.05) / (translations * flip * parityHalves * pointSplit)) + 64;
  const complex = model.isComplex || used.translation;
  return { sectorDim, complex, entries: sectorDim * (complex ? 2 : 1), nnz: sectorDim * pinnedColumnsPerState(model) };
}

/**
 * Peak memory of a sector-by-sector solve: the runtime and its helper threads, the orbit maps over
 * the full basis (a representative index and a group element per state), the ground-state
 * probabilities, the largest sector's stored matrix and Krylov basis, full-space ground states
 * when they are handed back, every solved state on the full space when they are saved, and the
 * typed arrays waiting for a garbage collection.
 */
export function estimateSectorMemory(opts: {
  dim: number;
  model: Model;
  used: Record<SymmetryName, boolean>;
  krylovVectors: number;
  states: number;
  /** Sectors solved at once, each with its own matrix and Krylov basis (default 1). */
  concurrent?: number;
  /** Threads for one product of the largest sector solved alone: each beyond the first means a build, a product and a vector-kernel helper (default 1). */
  productThreads?: number;
  /** Whether full-space ground states are built (default: when the space has at most 2^22 states). */
  expandGround?: boolean;
  /** Observables of each state (solve.observables = "each"): one full-space probability array, refilled for each state's mixture. */
  eachState?: boolean;
  /**
   * Solved states expanded to the full space to be saved (`--save-states-all`: every one, as
   * interleaved complex vectors); the ground level's copies alone are the `ground_states`.
   */
  savedStates?: number;
  /** Entanglement of site lists that are not sites 0..|A|-1: each expanded ground state (real for a real H) is copied with its sites reordered. */
  reorderedStates?: number;
}): MemoryEstimate {
  const { dim, model, used } = opts;
  const concurrent = opts.concurrent ?? 1;
  const { sectorDim, nnz, complex } = largestSector(dim, model, used);
  const scalar = complex ? 16 : 8;
  const maps = orbitMapCount(model, used);
  const helpers = concurrent > 1 ? concurrent - 1 : 3 * Math.max(0, (opts.productThreads ?? 1) - 1);
  const parts: Record<string, number> = {
    runtime: RUNTIME_BASELINE_BYTES,
    ...(helpers > 0 ? { helper_threads: helpers * HELPER_THREAD_BYTES } : {}),
    orbit_maps: maps * dim * 6,
    probabilities: dim * BYTES_PER_DOUBLE,
    // The stored matrix and its build chunks, alive together while the chunks are copied into the
    // arena (sectors reuse one arena, so no earlier sector's matrix waits for the GC): measured
    // peaks of 12x4 and 16x3 chains held 1.7 to 1.9 matrices.
    sector_matrix: concurrent * 2 * (nnz * (4 + scalar) + 8 * (sectorDim + 1)),
    krylov: concurrent * (opts.krylovVectors + 3) * sectorDim * scalar,
    kept_states: concurrent * 2 * opts.states * sectorDim * scalar,
  };
  if (opts.expandGround ?? dim <= 1 << 22) parts.ground_states = 2 * dim * 16;
  if (opts.eachState) parts.state_observables = dim * BYTES_PER_DOUBLE;
  if ((opts.savedStates ?? 0) > 0) parts.saved_states = opts.savedStates! * dim * 16;
  if ((opts.reorderedStates ?? 0) > 0)
    parts.reordered_states = opts.reorderedStates! * dim * (model.isComplex ? 16 : 8);
  let data = 0;
  for (const [k, v] of Object.entries(parts)) if (k !== 'runtime' && k !== 'helper_threads') data += v;
  parts.awaiting_gc = Math.min(SECTOR_GARBAGE_BYTES, 4 * data);
  let totalBytes = 0;
  for (const v of Object.values(parts)) totalBytes += v;
  return { totalBytes, parts };
}
