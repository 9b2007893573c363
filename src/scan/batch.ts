// Planning a Slurm job array for a scan: shard sizes, per-task memory and time from rungchain's
// own estimates, and the batch script itself (see src/scan/shard.ts for the shards).

import { RUNTIME_BASELINE_BYTES } from '../point/memory.js';
import { expandScan, pointCost, sizeScan } from './plan.js';
import { defaultRunDir } from '../runs/folders.js';
import { assignShards } from './shard.js';
import { loadSpec } from '../spec/spec.js';
import { InputError } from '../errors/errors.js';
import { slurmTimeLimit } from '../format/durations.js';
import { shellQuote } from '../format/tables.js';
import path from 'node:path';

/**
 * Seconds per unit of pointCost on one core. Measured on the development machine (a point of
 * 2187 states: about 6.5 ns per unit); a cluster core is assumed no faster, and the time limit
 * gets a further safety factor, since a task killed at its limit must redo its current point.
 */
const SECONDS_PER_COST_UNIT = 10e-9;
const TIME_SAFETY = 3;
const MIN_MINUTES = 10;

export interface BatchRequest {
  specPath: string;
  overrides: string[];
  shards: number;
  cpusPerTask: number;
  runDir?: string;
  minutes?: number;
  memoryBytes?: number;
  partition?: string;
  account?: string;
  extra: string[];
  rungchain: string;
}

export interface BatchPlan {
  script: string;
  runDir: string;
  shards: number;
  cpusPerTask: number;
  memoryBytes: number;
  minutes: number;
  timeText: string;
  heaviestPoints: number;
}

export function planBatch(request: BatchRequest): BatchPlan {
  const { raw, spec } = loadSpec(request.specPath, request.overrides);
  if (!spec.extra.scan) throw new InputError(`${request.specPath} has no [scan] section; nothing to shard`);
  const plan = expandScan(raw, spec);
  const sizes = sizeScan(plan, Infinity);
  const costs = sizes.plans.map(pointCost);
  const shards = assignShards(plan, costs, request.shards);
  let memory = 0;
  let cost = 0;
  let heaviestPoints = 0;
  for (const points of shards) {
    // Workers solve up to cpusPerTask points at once: the largest of them together.
    const largest = points
      .map((i) => sizes.plans[i].memory.totalBytes)
      .sort((a, b) => b - a)
      .slice(0, request.cpusPerTask);
    // Each estimate counts the runtime once; the workers share one process.
    const together = largest.reduce((s, b) => s + b, 0) - (largest.length - 1) * RUNTIME_BASELINE_BYTES;
    memory = Math.max(memory, together);
    const shardCost = points.reduce((s, i) => s + costs[i], 0);
    if (shardCost > cost) {
      cost = shardCost;
      heaviestPoints = points.length;
    }
  }
  const memoryBytes = request.memoryBytes ?? Math.ceil(memory * 1.25 + 256 * 2 ** 20);
  const estimated = ((cost / request.cpusPerTask) * SECONDS_PER_COST_UNIT * TIME_SAFETY) / 60;
  const minutes = request.minutes ?? Math.max(MIN_MINUTES, Math.ceil((estimated + 5) / 5) * 5);
  const runDir = request.runDir ?? defaultRunDir(request.specPath, plan.identity);
  const script = batchScript({
    specPath: request.specPath,
    overrides: request.overrides,
    shards: request.shards,
    runDir,
    cpusPerTask: request.cpusPerTask,
    memoryMiB: memoryBytes / 2 ** 20,
    minutes,
    partition: request.partition,
    account: request.account,
    jobName: `rungchain-${path.basename(request.specPath).replace(/\.(toml|json)$/i, '')}`,
    rungchain: request.rungchain,
    extra: request.extra,
  });
  return {
    script,
    runDir,
    shards: request.shards,
    cpusPerTask: request.cpusPerTask,
    memoryBytes,
    minutes,
    timeText: slurmTimeLimit(minutes),
    heaviestPoints,
  };
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
    `#SBATCH --time=${slurmTimeLimit(o.minutes)}`,
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
