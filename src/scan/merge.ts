// Merging shard folders (or any run folders of one scan) into one run folder.

import path from 'node:path';
import { InputError, OptionValueError, RunFileError } from '../errors/errors.js';
import { readRun, RunWriter, type RunManifest } from '../runs/runFiles.js';
import { latestRecords, type ScanRecord } from './record.js';

export interface MergeReport {
  out: string;
  shards: number;
  total: number;
  /** Records newly written to the merged run (0 when merging again changes nothing). */
  written: number;
  done: number;
  failed: number;
  /** Points no shard has a record of. */
  missing: number[];
  /** Points finished in more than one shard folder (one record is kept). */
  duplicated: number[];
}

function sameScan(a: RunManifest, b: RunManifest): boolean {
  return a.kind === b.kind && a.identity === b.identity;
}

/**
 * Merges shard folders (or any run folders of the same scan) into one run folder. Manifests must
 * match; the merged run holds each point's best record (done over failed; among equals, the
 * latest). Merging again, or merging into a folder that already has some points, only adds
 * what is new. `otherRunHint`: what the user can do when `out` holds another run (the command line
 * words it).
 */
export function mergeRuns(dirs: string[], out: string, otherRunHint?: string): MergeReport {
  if (dirs.length === 0) throw new InputError('merge: name at least one shard folder');
  const runs = dirs.map((d) => readRun(d));
  const first = runs[0].manifest;
  if (first.kind !== 'scan')
    throw new RunFileError(
      `${dirs[0]} holds ${first.kind === 'evolve' ? 'a time trace' : `a ${first.kind} run`}; merge combines scan runs`,
    );
  runs.forEach((r, k) => {
    if (!sameScan(first, r.manifest)) {
      throw new RunFileError(
        `${dirs[k]} is a different scan from ${dirs[0]} (identity ${r.manifest.identity.slice(0, 12)} vs ${first.identity.slice(0, 12)}); ` +
          'only shards of one scan (same spec, overrides and axes) can be merged',
      );
    }
  });
  const total = Number(first.points);
  const best = new Map<number, ScanRecord>();
  const doneIn = new Map<number, number>();
  for (const run of runs) {
    for (const [index, record] of latestRecords(run.records)) {
      if (record.status === 'done') doneIn.set(index, (doneIn.get(index) ?? 0) + 1);
      const held = best.get(index);
      if (!held || (held.status !== 'done' && record.status === 'done')) best.set(index, record);
    }
  }
  const duplicated = [...doneIn]
    .filter(([, n]) => n > 1)
    .map(([i]) => i)
    .sort((a, b) => a - b);
  const missing: number[] = [];
  for (let i = 0; i < total; i++) if (!best.has(i)) missing.push(i);

  if (dirs.some((d) => path.resolve(d) === path.resolve(out)))
    throw new OptionValueError('out', out, 'is one of the shard folders');
  const { shard: _shard, shard_points: _points, ...fields } = first;
  const writer = RunWriter.open(out, {
    kind: 'scan',
    identity: first.identity,
    version: first.version,
    fields: { ...stripBase(fields), merged_from: dirs.map((d) => path.resolve(d)) },
    mismatchHint: otherRunHint,
  });
  let written = 0;
  try {
    const existing = latestRecords(writer.existing);
    for (const index of [...best.keys()].sort((a, b) => a - b)) {
      const record = best.get(index)!;
      const held = existing.get(index);
      // Merging twice is harmless: a point already done stays; a failure is replaced by a success.
      if (held && (held.status === 'done' || record.status !== 'done')) continue;
      writer.append(record as unknown as Record<string, unknown>);
      written++;
    }
  } finally {
    writer.close();
  }
  const merged = latestRecords(readRun(out).records);
  let done = 0;
  let failed = 0;
  for (const r of merged.values()) {
    if (r.status === 'done') done++;
    else failed++;
  }
  return {
    out,
    shards: dirs.length,
    total,
    written,
    done,
    failed,
    missing: missing.filter((i) => !merged.has(i)),
    duplicated,
  };
}

/** Manifest fields a new run sets itself. */
function stripBase(fields: Record<string, unknown>): Record<string, unknown> {
  const {
    format: _f,
    format_version: _v,
    kind: _k,
    identity: _i,
    version: _ver,
    created: _c,
    machine: _m,
    ...rest
  } = fields;
  return rest;
}
