// What a scan writes to its run folder: one record per solved (or failed) point. The worker
// task makes them, the runner appends them, summaries, analysis and merges read them back.

import type { PointRecord } from '../point/record.js';
import type { RealizedDisorder } from '../model/disorder.js';
import type { ScanParams } from './plan.js';
import type { SpectrumResult } from '../spectrum/spectrum.js';

/** One record per point, as written to records.msgpack. */
export interface ScanRecord {
  index: number;
  params: ScanParams;
  status: 'done' | 'failed';
  /** Why a point failed: the error's class and message. */
  error?: string;
  result?: PointRecord;
  /** With a [spectrum] section: the point's spectrum (as `spectrum --json` prints it). */
  spectrum?: SpectrumResult;
  /** Matrix-vector products used (0 when failed before solving). */
  iterations: number;
  /** Wall time of this point, seconds. */
  seconds: number;
  /** Whether Lanczos started from the previous point's ground state. */
  warm_start: boolean;
  /**
   * Fidelity between this ground state and the previous point's on the same line, when both
   * live in the same basis: |<psi_prev|psi>|; for degenerate ground spaces P (g1 vectors) and
   * Q (g2 vectors), sqrt(sum_ab |<p_a|q_b>|^2 / max(g1, g2)), which is 1 exactly when the spaces
   * coincide. null for the first point of a line, after a change of basis, or when the previous point failed.
   */
  overlap_previous: number | null;
  /** A disorder ensemble's point: its realization and the values drawn for it (null when it failed before they were). */
  realization?: number;
  disorder?: RealizedDisorder | null;
  /** Worker thread id that solved it (0: the main thread). */
  worker: number;
  finished: string;
}

/** The latest record of each point (a retried point has several; the last one counts). */
export function latestRecords(records: Record<string, unknown>[]): Map<number, ScanRecord> {
  const latest = new Map<number, ScanRecord>();
  for (const r of records) {
    if (typeof r.index === 'number') latest.set(r.index, r as unknown as ScanRecord);
  }
  return latest;
}
