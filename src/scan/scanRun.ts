// A scan's run folder read back: every point of the scan with its latest record, or pending.

import { RunFileError } from '../errors/errors.js';
import { readRun, type RunManifest } from '../runs/runFiles.js';
import { paramsOf, type ScanParams, type ScanSection } from './plan.js';
import { latestRecords, type ScanRecord } from './record.js';

export interface SummaryRow {
  index: number;
  params: ScanParams;
  status: 'done' | 'failed' | 'pending';
  record: ScanRecord | null;
}

export interface ScanRunSummary {
  dir: string;
  manifest: RunManifest;
  section: ScanSection;
  /** Every point of the scan (or of the shard), in index order. */
  rows: SummaryRow[];
  counts: { total: number; done: number; failed: number; pending: number };
  records: number;
  fileBytes: number;
  tornBytes: number;
}

/** Reads a scan's run folder; damage in the middle of its records is a RunFileError, never skipped. */
export function loadScanRun(dir: string): ScanRunSummary {
  const run = readRun(dir);
  const { manifest } = run;
  if (manifest.kind !== 'scan')
    throw new RunFileError(
      `${dir} holds ${manifest.kind === 'evolve' ? 'a time trace' : `a ${manifest.kind} run`}, not a scan`,
    );
  const section: ScanSection = { axes: manifest.axes as ScanSection['axes'], zip: Boolean(manifest.zip) };
  const total = Number(manifest.points);
  const latest = latestRecords(run.records);
  // A shard's folder covers only its own points; a whole scan covers them all.
  const indices = Array.isArray(manifest.shard_points)
    ? (manifest.shard_points as number[])
    : Array.from({ length: total }, (_, i) => i);
  const rows: SummaryRow[] = indices.map((index) => {
    const record = latest.get(index) ?? null;
    return {
      index,
      params: record?.params ?? paramsOf(section, index),
      status: record ? record.status : 'pending',
      record,
    };
  });
  const counts = { total: rows.length, done: 0, failed: 0, pending: 0 };
  for (const r of rows) counts[r.status]++;
  return {
    dir,
    manifest,
    section,
    rows,
    counts,
    records: run.records.length,
    fileBytes: run.fileBytes,
    tornBytes: run.tornBytes,
  };
}
