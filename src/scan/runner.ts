// Running a scan: expand the spec, open (or resume) the run folder, hand runs of neighbouring
// points to a pool of worker threads, largest first (dispatch.ts), and append each finished
// point's record to the run file the moment it arrives.

import os from 'node:os';
import { fileURLToPath } from 'node:url';
import { Piscina } from 'piscina';
import { FileSystemError, InputError, RunFileError } from '../errors/errors.js';
import { defaultMemoryLimit } from '../point/memory.js';
import { loadSpec } from '../spec/spec.js';
import { expandScan, pointCost, sizeScan, type ScanPlan } from './plan.js';
import type { RunWriter } from '../runs/runFiles.js';
import { failedWriteError, onStopSignals, openRunFolder, tornRecordNote } from '../runs/openRun.js';
import { assignShards, type Shard } from './shard.js';
import { latestRecords, type ScanRecord } from './record.js';
import { linesAreContinuous, planTasks } from './taskPlan.js';
import { TaskDispatch } from './dispatch.js';
import { coreCount } from '../threads/cores.js';
import { workerScript } from '../threads/team.js';
import { defaultRunDir } from '../runs/folders.js';

// ---------------------------------------------------------------------------------------------
// The worker pool: built here and only here, so the choice between point-parallel and
// product-parallel work can be made in one place.

export interface PoolChoice {
  workers: number;
  /** Each worker's JS heap ceiling, MiB (see workerCeilings); V8's own default when absent. */
  heapMb?: number;
}

export function defaultWorkerCount(): number {
  return coreCount();
}

/**
 * Point-parallel or product-parallel: with at least as many points as cores, every core runs its
 * own points, one thread each (no hand-offs at all). With fewer points, or one point that
 * outweighs all the others together, fewer workers run and each product is split across the
 * spare cores over shared memory. An explicit worker count is kept as asked.
 */
export function chooseParallelism(
  pendingCosts: number[],
  requestedWorkers?: number,
): { workers: number; threadsPerPoint: number } {
  const cores = defaultWorkerCount();
  let workers = Math.max(1, Math.min(requestedWorkers ?? cores, pendingCosts.length));
  if (requestedWorkers === undefined && pendingCosts.length > 1) {
    const total = pendingCosts.reduce((a, b) => a + b, 0);
    const largest = Math.max(...pendingCosts);
    if (largest > total / 2) workers = 1;
  }
  return { workers, threadsPerPoint: Math.max(1, Math.floor(cores / workers)) };
}

export function createPointPool(choice: PoolChoice): Piscina {
  const filename = fileURLToPath(workerScript('point'));
  return new Piscina({
    filename,
    minThreads: choice.workers,
    maxThreads: choice.workers,
    concurrentTasksPerWorker: 1,
    idleTimeout: 30_000,
    ...(choice.heapMb ? { resourceLimits: { maxOldGenerationSizeMb: choice.heapMb } } : {}),
  });
}

/**
 * The memory ceilings of a scan's workers. A worker's JS heap may not outgrow the point limit
 * (V8 stops that worker alone, ERR_WORKER_OUT_OF_MEMORY), but typed arrays, shared buffers and
 * WebAssembly memory, where the vectors and matrices live, are outside any V8 heap limit: those
 * are bounded by the resident memory of the whole process: the main thread and, per worker, one
 * point at the limit and its JS heap at the ceiling, and never more than 90% of the machine's
 * memory (past that the system's out-of-memory killer would end the whole scan).
 */
export function workerCeilings(
  maxMemory: number,
  workers: number,
  mainBytes: number,
): { heapMb: number; processBytes: number } {
  const heapMb = Math.max(64, Math.min(4096, Math.floor(maxMemory / 2 ** 20)));
  return { heapMb, processBytes: Math.min(0.9 * os.totalmem(), mainBytes + workers * (maxMemory + heapMb * 2 ** 20)) };
}

// ---------------------------------------------------------------------------------------------
// The scan

/** What a scan tells as it goes; the command line shows it (a bar, lines, or nothing). */
export interface ScanReporter {
  /** A line for the user: resuming, shard, workers, interrupted, finished. */
  note(line: string): void;
  /** Solving begins: `total` points in this run, `done` and `failed` of them recorded before; `remainingCost` estimates the rest. */
  start(counts: { total: number; done: number; failed: number }, remainingCost: number): void;
  /** A point's record is written; `cost` is its estimated cost (the share of remainingCost now done). */
  recorded(record: ScanRecord, counts: { total: number; done: number; failed: number }, cost: number): void;
  /** Solving has ended (before the closing notes). */
  stop(): void;
}

const SILENT: ScanReporter = {
  note: () => undefined,
  start: () => undefined,
  recorded: () => undefined,
  stop: () => undefined,
};

export interface ScanOptions {
  specPath: string;
  overrides?: string[];
  /** Run folder; default runs/<spec name>-<identity prefix>, so the same command resumes. */
  out?: string;
  workers?: number;
  retryFailed?: boolean;
  warmStart?: boolean;
  maxMemory?: number;
  /** How the user sets `maxMemory` (the command line's flag), named in messages and failed points' errors. */
  memoryLimitName?: string;
  /** Where messages and progress go (default: nowhere). */
  report?: ScanReporter;
  /** The command that resumes this scan in `dir`, printed after an interruption or a failed write (the command line builds it). */
  resumeCommand?: (dir: string) => string;
  /** Catch SIGINT/SIGTERM: stop handing out work, keep every finished record, print how to resume. */
  handleSignals?: boolean;
  /** What the user can do when `dir` holds another run, or another part of this scan (the command line words it). */
  folderHints?: FolderHints;
  /** Run only this shard's points (balanced by estimated cost; see src/scan/shard.ts). */
  shard?: Shard | null;
}

export interface FolderHints {
  otherRun: (dir: string) => string;
  otherShard: string;
}

export interface ScanOutcome {
  dir: string;
  total: number;
  done: number;
  failed: number;
  pending: number;
  /** Points solved in this session. */
  ran: number;
  seconds: number;
  interrupted: boolean;
  /** Every selected point already had its record (failed ones too, unless retried): nothing was solved. */
  nothingToDo: boolean;
}

/** The scan as planned from its spec, before anything is written. */
interface PreparedScan {
  raw: Record<string, unknown>;
  plan: ScanPlan;
  sizes: ReturnType<typeof sizeScan>;
  costs: number[];
  maxMemory: number;
  shard: Shard | null;
  /** This shard's points (null: the whole scan). */
  shardPoints: number[] | null;
  dir: string;
}

function prepareScan(options: ScanOptions): PreparedScan {
  const { raw, spec } = loadSpec(options.specPath, options.overrides ?? []);
  if (!spec.extra.scan)
    throw new InputError(
      `${options.specPath} has no [scan] section; add [[scan.axis]] entries, or use \`rungchain solve\``,
    );
  const plan = expandScan(raw, spec);
  const maxMemory = options.maxMemory ?? defaultMemoryLimit();
  const sizes = sizeScan(plan, maxMemory);
  const costs = sizes.plans.map(pointCost);
  const shard = options.shard ?? null;
  return {
    raw,
    plan,
    sizes,
    costs,
    maxMemory,
    shard,
    shardPoints: shard ? assignShards(plan, costs, shard.count)[shard.index - 1] : null,
    dir: options.out ?? defaultRunDir(options.specPath, plan.identity, shard),
  };
}

/** Opens (or resumes) the scan's run folder; refuses one that holds another shard of the scan, or the whole of it. */
function openScanFolder(scan: PreparedScan, options: ScanOptions): RunWriter {
  const { plan, shard, dir } = scan;
  const writer = openRunFolder({
    kind: 'scan',
    dir,
    identity: plan.identity,
    specPath: options.specPath,
    overrides: options.overrides ?? [],
    spec: scan.raw,
    otherRunHint: options.folderHints?.otherRun(dir),
    fields: {
      axes: plan.section.axes,
      zip: plan.section.zip,
      points: plan.points.length,
      ...(shard ? { shard: { index: shard.index, count: shard.count }, shard_points: scan.shardPoints } : {}),
    },
  });
  const held = writer.manifest.shard as { index: number; count: number } | undefined;
  if ((held?.index ?? null) !== (shard?.index ?? null) || (held?.count ?? null) !== (shard?.count ?? null)) {
    writer.close();
    const what = (s: { index: number; count: number } | null | undefined) =>
      s ? `shard ${s.index}/${s.count}` : 'the whole scan';
    const hint = options.folderHints ? `; ${options.folderHints.otherShard}` : '';
    throw new RunFileError(`${dir} holds ${what(held)} of this scan, not ${what(shard)}${hint}`);
  }
  return writer;
}

/** The run's points by their latest record: done, failed (run again with retryFailed), or pending. */
function tallyRecords(
  selected: Set<number>,
  existing: Record<string, unknown>[],
  retryFailed: boolean,
): { done: number; failed: number; pending: Set<number> } {
  const latest = latestRecords(existing);
  let done = 0;
  let failed = 0;
  const pending = new Set<number>();
  for (const index of selected) {
    const r = latest.get(index);
    if (r?.status === 'done') done++;
    else if (r?.status === 'failed' && !retryFailed) failed++;
    else pending.add(index);
  }
  return { done, failed, pending };
}

/** A scan's worker pool, its dispatch and the signal handlers, shut down together once the closing notes are out. */
class ScanWorkers {
  pool: Piscina | null = null;
  dispatch: TaskDispatch | null = null;
  removeSignalHandlers = (): void => undefined;

  async shutDown(): Promise<void> {
    this.dispatch?.endMemoryWatch();
    this.removeSignalHandlers();
    if (this.pool) await this.pool.destroy().catch(() => undefined);
  }
}

/** The points this run covers, and their counts by latest record (`counts` grows as records are written). */
interface Selection {
  selected: Set<number>;
  pending: Set<number>;
  counts: { done: number; failed: number };
  total: number;
}

/**
 * Solves the pending points on the workers, appending each record as it arrives; returns how many
 * were solved and whether a signal stopped the scan. A failed append stops it and is thrown.
 */
async function solvePending(
  scan: PreparedScan,
  writer: RunWriter,
  { selected, pending, counts, total }: Selection,
  options: ScanOptions,
  report: ScanReporter,
  workers: ScanWorkers,
): Promise<{ ran: number; interrupted: boolean }> {
  const { plan, costs } = scan;
  const parallelism = chooseParallelism(
    [...pending].map((i) => costs[i]),
    options.workers,
  );
  const { threadsPerPoint } = parallelism;
  report.note(
    `${pending.size} points on ${parallelism.workers} worker${parallelism.workers > 1 ? 's' : ''}` +
      (threadsPerPoint > 1 ? `, each product on up to ${threadsPerPoint} threads` : ''),
  );
  const queue = planTasks(plan, pending, costs, parallelism.workers);
  report.start(
    { total, ...counts },
    [...pending].reduce((s, i) => s + costs[i], 0),
  );
  let ran = 0;

  // A failed append (disk full, folder removed) stops the scan; it is reported once all is shut.
  let writeError = null as Error | null;
  const write = (record: ScanRecord): void => {
    if (!selected.has(record.index) || writeError) return;
    try {
      writer.append(record as unknown as Record<string, unknown>);
    } catch (e) {
      writeError = e instanceof Error ? e : new Error(String(e));
      workers.dispatch?.stop();
      return;
    }
    ran++;
    if (record.status === 'done') counts.done++;
    else counts.failed++;
    report.recorded(record, { total, ...counts }, costs[record.index]);
  };

  const ceilings = workerCeilings(scan.maxMemory, parallelism.workers, process.memoryUsage.rss());
  const pool = createPointPool({ workers: parallelism.workers, heapMb: ceilings.heapMb });
  workers.pool = pool;
  // A task's own failures reach its promise. Piscina emits the others: a worker's heap running
  // out as it is being stopped by the memory watch, its task already settled. Unheard, that
  // event would end the whole scan.
  pool.on('error', () => undefined);
  const dispatch = new TaskDispatch({
    pool,
    queue,
    workers: parallelism.workers,
    threadsPerPoint,
    continuous: linesAreContinuous(plan),
    costs,
    pointBytes: scan.sizes.plans.map((p) => p.memory.totalBytes),
    maxMemory: scan.maxMemory,
    memoryLimitName: options.memoryLimitName,
    ceilings,
    warmStart: options.warmStart !== false,
    write,
  });
  workers.dispatch = dispatch;
  if (options.handleSignals)
    workers.removeSignalHandlers = onStopSignals(() => {
      if (!dispatch.stopping) dispatch.stop();
    });
  await dispatch.run();
  dispatch.endMemoryWatch();
  report.stop();
  if (writeError instanceof FileSystemError && options.resumeCommand)
    throw failedWriteError(writeError, 'every finished point is kept', options.resumeCommand(scan.dir));
  if (writeError) throw writeError;
  return { ran, interrupted: dispatch.stopping };
}

/**
 * Runs a scan: plans it, opens (or resumes) its run folder, solves the pending points on a pool of
 * worker threads and appends each record the moment it arrives.
 */
export async function runScan(options: ScanOptions): Promise<ScanOutcome> {
  const started = performance.now();
  const report = options.report ?? SILENT;
  const scan = prepareScan(options);
  const { plan, shard, dir } = scan;
  const writer = openScanFolder(scan, options);
  const workers = new ScanWorkers();
  try {
    const torn = tornRecordNote(writer, 'that point runs again');
    if (torn) report.note(torn);
    if (shard)
      report.note(
        `shard ${shard.index} of ${shard.count} (from ${shard.source}): ${scan.shardPoints!.length} of ${plan.points.length} points`,
      );
    const selected = new Set(scan.shardPoints ?? plan.points.map((p) => p.index));
    const { pending, ...counts } = tallyRecords(selected, writer.existing, Boolean(options.retryFailed));
    const total = selected.size;
    const outcome = (ran: number, interrupted: boolean, nothingToDo = false): ScanOutcome => ({
      dir,
      total,
      done: counts.done,
      failed: counts.failed,
      pending: total - counts.done - counts.failed,
      ran,
      seconds: (performance.now() - started) / 1000,
      interrupted,
      nothingToDo,
    });
    if (pending.size === 0) return outcome(0, false, true);
    if (counts.done + counts.failed > 0)
      report.note(`resuming ${dir}: ${counts.done} done, ${counts.failed} failed, ${pending.size} to run`);

    const { ran, interrupted } = await solvePending(
      scan,
      writer,
      { selected, pending, counts, total },
      options,
      report,
      workers,
    );
    const result = outcome(ran, interrupted);
    if (interrupted) {
      report.note(
        `interrupted: ${result.done} done, ${result.failed} failed, ${result.pending} pending of ${total}; every finished point is saved in ${dir}`,
      );
      if (options.resumeCommand) report.note(`resume with: ${options.resumeCommand(dir)}`);
    } else {
      report.note(
        `scan finished: ${result.done} done, ${result.failed} failed of ${total} (${ran} solved now, ${result.seconds.toFixed(1)} s); run folder ${dir}`,
      );
    }
    return result;
  } finally {
    await workers.shutDown();
    writer.close();
  }
}
