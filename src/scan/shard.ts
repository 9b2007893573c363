// Scans that outgrow one machine: deterministic shards balanced by estimated cost, the batch
// scheduler's array environment, a job-array batch script, and merging shard folders into one run.
//
// A shard is a set of whole line pieces (so warm starts still chain), chosen by the greedy
// longest-processing-time rule over the estimated cost of each piece: every shard computes the
// same assignment from the spec alone, with no coordination.

import path from 'node:path';
import { InputError, RunFileError } from '../errors/errors.js';
import { readRun, RunWriter, type RunManifest } from '../runs/runFiles.js';
import type { ScanPlan } from './plan.js';
import { latestRecords } from './scanRun.js';
import type { ScanRecord } from './task.js';
import { shellQuote } from '../format/tables.js';

export interface Shard {
  /** 1-based: shard `index` of `count`. */
  index: number;
  count: number;
  /** Where the shard came from, for messages: "--shard" or the scheduler's variables. */
  source: string;
}

/** Line pieces: at least three per shard where lines allow, so costs can be balanced. */
function pieces(plan: ScanPlan, count: number): number[][] {
  const perLine = count <= 1 ? 1 : Math.max(1, Math.ceil((3 * count) / plan.lines.length));
  const out: number[][] = [];
  for (const line of plan.lines) {
    const size = Math.max(1, Math.ceil(line.length / perLine));
    for (let s = 0; s < line.length; s += size) out.push(line.slice(s, s + size));
  }
  return out;
}

/** Point indices of every shard (ascending), balanced by estimated cost; deterministic. */
export function assignShards(plan: ScanPlan, costs: number[], count: number): number[][] {
  const units = pieces(plan, count).map((points) => ({ points, cost: points.reduce((s, i) => s + costs[i], 0) }));
  units.sort((a, b) => b.cost - a.cost || a.points[0] - b.points[0]);
  const load = new Array<number>(count).fill(0);
  const shards: number[][] = Array.from({ length: count }, () => []);
  for (const unit of units) {
    let best = 0;
    for (let s = 1; s < count; s++) if (load[s] < load[best]) best = s;
    load[best] += unit.cost;
    shards[best].push(...unit.points);
  }
  return shards.map((s) => s.sort((a, b) => a - b));
}

// ---------------------------------------------------------------------------------------------
// Merging shard folders

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
 * what is new.
 */
export function mergeRuns(dirs: string[], out: string): MergeReport {
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
    throw new InputError(`merge: --out ${out} is one of the shard folders`);
  const { shard: _shard, shard_points: _points, ...fields } = first;
  const writer = RunWriter.open(out, {
    kind: 'scan',
    identity: first.identity,
    version: first.version,
    fields: { ...stripBase(fields), merged_from: dirs.map((d) => path.resolve(d)) },
    mismatchHint: `${out} already holds another run; choose another --out`,
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

// ---------------------------------------------------------------------------------------------
// The job-array batch script

export interface BatchOptions {
  specPath: string;
  overrides: string[];
  shards: number;
  /** Folder holding one shard folder per task (shard-<i>) and the merged run. */
  runDir: string;
  cpusPerTask: number;
  /** Per-task memory in MiB. */
  memoryMiB: number;
  /** Per-task time limit in minutes. */
  minutes: number;
  partition?: string;
  account?: string;
  jobName: string;
  /** The command that runs rungchain on the cluster (default: this node and this script's path). */
  rungchain: string;
  extra: string[];
}

export function formatMinutes(minutes: number): string {
  const m = Math.max(1, Math.ceil(minutes));
  const days = Math.floor(m / 1440);
  const h = Math.floor((m % 1440) / 60);
  const mm = m % 60;
  const hms = `${String(h).padStart(2, '0')}:${String(mm).padStart(2, '0')}:00`;
  return days > 0 ? `${days}-${hms}` : hms;
}

export function batchScript(o: BatchOptions): string {
  const abs = (p: string) => path.resolve(p);
  const lines = [
    '#!/bin/bash',
    `# Job array for the scan ${o.specPath}: ${o.shards} shards balanced by estimated cost.`,
    `# Each task runs one shard into ${o.runDir}/shard-<i>; resubmitting resumes unfinished shards.`,
    `# When all are done: ${o.rungchain} merge ${o.runDir}/shard-* --out ${o.runDir}/merged`,
    `#SBATCH --job-name=${o.jobName}`,
    `#SBATCH --array=1-${o.shards}`,
    `#SBATCH --ntasks=1`,
    `#SBATCH --cpus-per-task=${o.cpusPerTask}`,
    `#SBATCH --mem=${Math.ceil(o.memoryMiB)}M`,
    `#SBATCH --time=${formatMinutes(o.minutes)}`,
    `#SBATCH --output=${abs(o.runDir)}/slurm-%A_%a.out`,
    `#SBATCH --signal=B:TERM@60`,
  ];
  if (o.partition) lines.push(`#SBATCH --partition=${o.partition}`);
  if (o.account) lines.push(`#SBATCH --account=${o.account}`);
  for (const e of o.extra) lines.push(`#SBATCH ${e}`);
  const command = [
    ...o.rungchain.split(' '),
    'scan',
    abs(o.specPath),
    ...o.overrides.flatMap((s) => ['--set', s]),
    '--out',
    `${abs(o.runDir)}/shard-\${SLURM_ARRAY_TASK_ID}`,
    '--workers',
    '${SLURM_CPUS_PER_TASK:-1}',
  ];
  lines.push('', 'set -euo pipefail', `mkdir -p ${shellQuote(abs(o.runDir))}`);
  // The shard comes from SLURM_ARRAY_TASK_ID/COUNT/MIN; exec so the scan receives the scheduler's
  // TERM before the time limit and saves its work.
  lines.push(`exec ${command.map((w) => (w.includes('${') ? `"${w}"` : shellQuote(w))).join(' ')}`);
  return lines.join('\n') + '\n';
}
