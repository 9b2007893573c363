// Memory estimates made before anything large is allocated, and the limit they are checked against.

import os from 'node:os';
import { ResourceError } from './errors.js';

const BYTES_PER_DOUBLE = 8;
/** Node's own heap, code and buffers, measured on an idle process of this engine. */
export const RUNTIME_BASELINE_BYTES = 60 * 1024 * 1024;

/** The default memory limit: a share of physical memory that leaves the machine usable. */
export function defaultMemoryLimit(): number {
  return Math.floor(os.totalmem() * 0.6);
}

/** Parses "8GB", "512MiB", "1.5G", "2000000" (bytes) into bytes. */
export function parseMemorySize(text: string, what = '--max-memory'): number {
  const m = /^\s*([0-9]*\.?[0-9]+)\s*([kKmMgGtT]?)(i?[bB])?\s*$/.exec(text);
  if (!m) throw new ResourceError(`${what}: cannot read "${text}" as a memory size (e.g. 8GB, 512MB)`);
  const scale: Record<string, number> = { '': 1, k: 2 ** 10, m: 2 ** 20, g: 2 ** 30, t: 2 ** 40 };
  return Math.floor(parseFloat(m[1]) * scale[m[2].toLowerCase()]);
}

export function formatBytes(bytes: number): string {
  const units = ['B', 'KiB', 'MiB', 'GiB', 'TiB'];
  let v = bytes;
  let u = 0;
  while (v >= 1024 && u < units.length - 1) {
    v /= 1024;
    u++;
  }
  return `${v < 10 && u > 0 ? v.toFixed(2) : v < 100 && u > 0 ? v.toFixed(1) : Math.round(v)} ${units[u]}`;
}

export interface MemoryEstimate {
  totalBytes: number;
  parts: Record<string, number>;
}

/**
 * Peak memory of one solve: the operator's storage, the Krylov basis and work vectors of the
 * eigensolver, the returned eigenvectors, and the observables' scratch.
 */
export function estimateSolveMemory(opts: {
  dim: number;
  isComplex: boolean;
  operatorBytes: number;
  krylovVectors: number;
  states: number;
  denseThreshold: number;
}): MemoryEstimate {
  const vector = opts.dim * (opts.isComplex ? 2 : 1) * BYTES_PER_DOUBLE;
  const parts: Record<string, number> = { runtime: RUNTIME_BASELINE_BYTES, operator: opts.operatorBytes };
  if (opts.dim <= opts.denseThreshold) {
    // Dense matrix, its real embedding when complex, and the decomposition's copies.
    const n = opts.isComplex ? 2 * opts.dim : opts.dim;
    parts.dense = 4 * n * n * BYTES_PER_DOUBLE;
  } else {
    parts.krylov = (opts.krylovVectors + 3) * vector;
  }
  parts.eigenvectors = opts.states * vector;
  parts.observables = opts.dim * BYTES_PER_DOUBLE;
  let totalBytes = 0;
  for (const v of Object.values(parts)) totalBytes += v;
  return { totalBytes, parts };
}

export function assertWithinMemory(estimate: MemoryEstimate, limit: number, what: string): void {
  if (estimate.totalBytes > limit) {
    throw new ResourceError(
      `${what} needs an estimated ${formatBytes(estimate.totalBytes)}, more than the memory limit ${formatBytes(limit)}` +
        ` (raise it with --max-memory, or use symmetry sectors / fewer states)`,
    );
  }
}
