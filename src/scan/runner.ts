// Running a scan: expand the spec, open (or resume) the run folder, hand runs of neighbouring
// points to a pool of worker threads, largest first, and append each finished point's record to
// the run file the moment it arrives.

import os from 'node:os';
import { fileURLToPath } from 'node:url';
import { MessageChannel } from 'node:worker_threads';
import { Piscina } from 'piscina';
import cliProgress from 'cli-progress';
import { FileSystemError, InputError, RunFileError } from '../errors/errors.js';
import { defaultMemoryLimit } from '../point/memory.js';
import { formatBytes } from '../format/bytes.js';
import { shellCommand } from '../format/tables.js';
import { loadSpec } from '../spec/spec.js';
import { expandScan, formatParams, pointCost, sizeScan, type ScanPlan, type ScanPoint } from './plan.js';
import { RunWriter } from '../runs/runFiles.js';
import { assignShards, type Shard } from './shard.js';
import { newClaims, takeTail, unclaimed } from './claims.js';
import { latestRecords } from './scanRun.js';
import { coreCount } from '../threads/cores.js';
import { workerScript } from '../threads/team.js';
import { defaultRunDir } from '../runs/folders.js';
import { rungchainVersion } from '../runs/version.js';
import type { ScanRecord, TaskMessage } from './task.js';

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

/** How often the scan compares its resident memory with the workers' ceiling. */
const MEMORY_WATCH_MS = 100;

/** Why a worker stopped, for the failed point's record. */
function workerStopReason(error: unknown, heapMb: number): string {
  const code = (error as { code?: unknown } | null)?.code;
  if (code === 'ERR_WORKER_OUT_OF_MEMORY')
    return `its JS heap went over the worker's ceiling of ${heapMb} MiB (ERR_WORKER_OUT_OF_MEMORY)`;
  const reason = error instanceof Error ? error.message : String(error);
  return `the worker stopped while solving this point (${reason}); out of memory is the usual cause`;
}

// ---------------------------------------------------------------------------------------------
// Tasks: runs of neighbouring pending points on one line

export interface PlannedTask {
  points: ScanPoint[];
  /** The line's point before points[0], solved first for its overlap (see ScanTask.leadIn). */
  leadIn?: ScanPoint;
  cost: number;
}

/** Whether neighbours along a line can share a basis: every axis that moves along a line numeric, none a size. */
export function linesAreContinuous(plan: ScanPlan): boolean {
  const moving = plan.section.zip ? plan.section.axes : plan.section.axes.slice(-1);
  return moving.every(
    (a) =>
      a.values.every((v) => typeof v === 'number') &&
      !['chain.sites', 'levels.count', 'particles.number'].includes(a.key),
  );
}

/**
 * Splits the pending points into tasks: each a run of consecutive pending points of one line, so
 * warm starts chain within it; ordered by cost, largest first, so a long night ends on small work
 * and no big point starts last. Lines are cut into pieces only when there are too few of them to
 * keep every worker busy (two tasks per worker), as each cut costs a lead-in solve.
 */
export function planTasks(plan: ScanPlan, pending: Set<number>, costs: number[], workers: number): PlannedTask[] {
  const busyLines = plan.lines.filter((line) => line.some((i) => pending.has(i))).length;
  // Points of about equal cost split evenly, one piece per worker (each cut costs a lead-in solve);
  // uneven ones in two pieces per worker, so a worker that drew the cheap end can take more.
  const pendingCosts = [...pending].map((i) => costs[i]);
  const even = pendingCosts.length > 0 && Math.max(...pendingCosts) <= 1.5 * Math.min(...pendingCosts);
  const piecesPerLine = workers <= 1 ? 1 : Math.max(1, Math.ceil(((even ? 1 : 2) * workers) / Math.max(1, busyLines)));
  const tasks: PlannedTask[] = [];
  for (const line of plan.lines) {
    const pendingOnLine = line.filter((i) => pending.has(i)).length;
    const chunk = Math.max(1, Math.ceil(pendingOnLine / piecesPerLine));
    let run: ScanPoint[] = [];
    const flush = (): void => {
      for (let s = 0; s < run.length; s += chunk) {
        const points = run.slice(s, s + chunk);
        tasks.push({ points, cost: points.reduce((sum, p) => sum + costs[p.index], 0) });
      }
      run = [];
    };
    for (const index of line) {
      if (pending.has(index)) run.push(plan.points[index]);
      else flush();
    }
    flush();
  }
  // A task that starts inside a line gets the point before it as a lead-in, so the overlaps of
  // neighbours along the line have no holes where lines were cut or a run resumed.
  if (linesAreContinuous(plan)) {
    const before = new Map<number, number>();
    for (const line of plan.lines) line.forEach((index, k) => k > 0 && before.set(index, line[k - 1]));
    for (const task of tasks) {
      const lead = before.get(task.points[0].index);
      if (lead !== undefined) {
        task.leadIn = plan.points[lead];
        task.cost += costs[lead];
      }
    }
  }
  return tasks.sort((a, b) => b.cost - a.cost || a.points[0].index - b.points[0].index);
}

// ---------------------------------------------------------------------------------------------
// Progress

interface Progress {
  record(record: ScanRecord, done: number, failed: number, total: number): void;
  stop(): void;
}

function formatDuration(seconds: number): string {
  if (!Number.isFinite(seconds)) return '?';
  const s = Math.round(seconds);
  if (s < 60) return `${s}s`;
  if (s < 3600) return `${Math.floor(s / 60)}m${String(s % 60).padStart(2, '0')}s`;
  return `${Math.floor(s / 3600)}h${String(Math.floor((s % 3600) / 60)).padStart(2, '0')}m`;
}

function makeProgress(
  mode: 'bar' | 'lines' | 'none',
  total: number,
  initialDone: number,
  initialFailed: number,
  stream: NodeJS.WriteStream,
  costOf: (index: number) => number,
  remainingCost: number,
): Progress {
  const started = performance.now();
  let costDone = 0;
  const eta = (): number => {
    const elapsed = (performance.now() - started) / 1000;
    // Cost-weighted: largest points run first, so a count-based estimate would be far too pessimistic.
    return costDone > 0 ? (elapsed * (remainingCost - costDone)) / costDone : NaN;
  };
  if (mode === 'none') {
    return { record: (r) => void (costDone += costOf(r.index)), stop: () => {} };
  }
  if (mode === 'lines') {
    const width = String(total).length;
    return {
      record(r, done, failed) {
        costDone += costOf(r.index);
        const head = `[${String(done + failed).padStart(width)}/${total}] #${r.index} ${formatParams(r.params)}`;
        const tail =
          r.status === 'done'
            ? `done E0=${r.result!.energies[0].toPrecision(10)} products=${r.iterations}${r.warm_start ? ' warm' : ''} ${r.seconds.toFixed(2)}s`
            : `FAILED ${r.error}`;
        stream.write(`${head} ${tail}  (eta ${formatDuration(eta())})\n`);
      },
      stop() {},
    };
  }
  const bar = new cliProgress.SingleBar(
    {
      stream,
      format: ' {bar} {value}/{total} points | {failed} failed | elapsed {elapsedText} | eta {etaText}',
      hideCursor: true,
      clearOnComplete: false,
      fps: 5,
    },
    cliProgress.Presets.shades_classic,
  );
  bar.start(total, initialDone + initialFailed, { failed: initialFailed, elapsedText: '0s', etaText: '?' });
  const timer = setInterval(
    () => bar.update({ elapsedText: formatDuration((performance.now() - started) / 1000) }),
    1000,
  );
  timer.unref();
  return {
    record(r, done, failed) {
      costDone += costOf(r.index);
      bar.update(done + failed, {
        failed,
        elapsedText: formatDuration((performance.now() - started) / 1000),
        etaText: formatDuration(eta()),
      });
    },
    stop() {
      clearInterval(timer);
      bar.stop();
    },
  };
}

// ---------------------------------------------------------------------------------------------
// The scan

export interface ScanOptions {
  specPath: string;
  overrides?: string[];
  /** Run folder; default runs/<spec name>-<identity prefix>, so the same command resumes. */
  out?: string;
  workers?: number;
  retryFailed?: boolean;
  warmStart?: boolean;
  maxMemory?: number;
  /** --max-memory as the user wrote it, repeated in the command that resumes. */
  maxMemoryText?: string;
  progress?: 'auto' | 'bar' | 'lines' | 'none';
  /** Where progress and messages go (default stderr). */
  stream?: NodeJS.WriteStream;
  /** Catch SIGINT/SIGTERM: stop handing out work, keep every finished record, print how to resume. */
  handleSignals?: boolean;
  /** Run only this shard's points (balanced by estimated cost; see src/scan/shard.ts). */
  shard?: Shard | null;
  /** How the printed commands start the program (the command line passes its own invocation). */
  program?: string;
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
  resumeCommand: string;
}

export async function runScan(options: ScanOptions): Promise<ScanOutcome> {
  const started = performance.now();
  const stream = options.stream ?? process.stderr;
  const say = (line: string): void => {
    if (options.progress !== 'none') stream.write(line + '\n');
  };
  const overrides = options.overrides ?? [];
  const { raw, spec } = loadSpec(options.specPath, overrides);
  if (!spec.extra.scan)
    throw new InputError(
      `${options.specPath} has no [scan] section; add [[scan.axis]] entries, or use \`rungchain solve\``,
    );
  const plan = expandScan(raw, spec);
  const maxMemory = options.maxMemory ?? defaultMemoryLimit();
  const sizes = sizeScan(plan, maxMemory);
  const costs = sizes.plans.map(pointCost);
  const shard = options.shard ?? null;
  const dir = options.out ?? defaultRunDir(options.specPath, plan.identity, shard);
  const shardArgs = shard && shard.source === '--shard' ? ['--shard', `${shard.index}/${shard.count}`] : [];
  const program = options.program ?? 'rungchain';
  const resumeCommand = shellCommand(program, [
    'scan',
    options.specPath,
    ...overrides.flatMap((o) => ['--set', o]),
    ...shardArgs,
    ...(options.warmStart === false ? ['--no-warm-start'] : []),
    ...(options.maxMemoryText !== undefined ? ['--max-memory', options.maxMemoryText] : []),
    ...(options.workers !== undefined ? ['--workers', String(options.workers)] : []),
    ...(options.retryFailed ? ['--retry-failed'] : []),
    '--out',
    dir,
  ]);
  const shardPoints = shard ? assignShards(plan, costs, shard.count)[shard.index - 1] : null;

  const writer = RunWriter.open(dir, {
    kind: 'scan',
    identity: plan.identity,
    version: rungchainVersion(),
    mismatchHint: `choose another --out, or delete ${dir} to start over`,
    fields: {
      spec_path: options.specPath,
      overrides,
      spec: raw,
      axes: plan.section.axes,
      zip: plan.section.zip,
      points: plan.points.length,
      ...(shard ? { shard: { index: shard.index, count: shard.count }, shard_points: shardPoints } : {}),
    },
  });
  const held = writer.manifest.shard as { index: number; count: number } | undefined;
  if ((held?.index ?? null) !== (shard?.index ?? null) || (held?.count ?? null) !== (shard?.count ?? null)) {
    writer.close();
    const what = (s: { index: number; count: number } | null | undefined) =>
      s ? `shard ${s.index}/${s.count}` : 'the whole scan';
    throw new RunFileError(`${dir} holds ${what(held)} of this scan, not ${what(shard)}; choose another --out`);
  }

  let pool: Piscina | null = null;
  let watch: ReturnType<typeof setInterval> | null = null;
  const signalHandlers: [NodeJS.Signals, () => void][] = [];
  try {
    if (writer.cutBytes > 0)
      say(`dropped a torn last record (${writer.cutBytes} bytes, a write cut short); that point runs again`);
    if (shard)
      say(
        `shard ${shard.index} of ${shard.count} (from ${shard.source}): ${shardPoints!.length} of ${plan.points.length} points`,
      );
    const selected = new Set(shardPoints ?? plan.points.map((p) => p.index));
    const latest = latestRecords(writer.existing);
    let done = 0;
    let failed = 0;
    const pending = new Set<number>();
    for (const index of selected) {
      const r = latest.get(index);
      if (r?.status === 'done') done++;
      else if (r?.status === 'failed' && !options.retryFailed) failed++;
      else pending.add(index);
    }
    const total = selected.size;
    const outcome = (ran: number, interrupted: boolean): ScanOutcome => ({
      dir,
      total,
      done,
      failed,
      pending: total - done - failed,
      ran,
      seconds: (performance.now() - started) / 1000,
      interrupted,
      resumeCommand,
    });
    if (pending.size === 0) {
      say(
        `nothing to do in ${dir}: ${done} done, ${failed} failed of ${total}${failed > 0 ? ' (rerun failed points with --retry-failed)' : ''}`,
      );
      return outcome(0, false);
    }
    if (done + failed > 0) say(`resuming ${dir}: ${done} done, ${failed} failed, ${pending.size} to run`);

    const { workers, threadsPerPoint } = chooseParallelism(
      [...pending].map((i) => costs[i]),
      options.workers,
    );
    say(
      `${pending.size} points on ${workers} worker${workers > 1 ? 's' : ''}` +
        (threadsPerPoint > 1 ? `, each product on up to ${threadsPerPoint} threads` : ''),
    );
    const queue = planTasks(plan, pending, costs, workers);
    const remainingCost = [...pending].reduce((s, i) => s + costs[i], 0);
    const mode =
      options.progress === undefined || options.progress === 'auto'
        ? stream.isTTY
          ? 'bar'
          : 'lines'
        : options.progress;
    const progress = makeProgress(mode, total, done, failed, stream, (i) => costs[i], remainingCost);
    let ran = 0;
    let stopping = false;

    // A failed append (disk full, folder removed) stops the scan; it is reported once all is shut.
    let writeError = null as Error | null;
    const write = (record: ScanRecord): void => {
      if (!selected.has(record.index) || writeError) return;
      try {
        writer.append(record as unknown as Record<string, unknown>);
      } catch (e) {
        writeError = e instanceof Error ? e : new Error(String(e));
        stopping = true;
        void pool?.destroy();
        return;
      }
      ran++;
      if (record.status === 'done') done++;
      else failed++;
      progress.record(record, done, failed, total);
    };

    const ceilings = workerCeilings(maxMemory, workers, process.memoryUsage.rss());
    pool = createPointPool({ workers, heapMb: ceilings.heapMb });
    // A task's own failures reach its promise. Piscina emits the others: a worker's heap running
    // out as it is being stopped by the memory watch, its task already settled. Unheard, that
    // event would end the whole scan.
    pool.on('error', () => undefined);
    const activePool = pool;
    const continuous = linesAreContinuous(plan);
    await new Promise<void>((resolve) => {
      let inflight = 0;
      const running = new Map<PlannedTask, Int32Array>();
      // The point each running task is on, and how to stop its worker.
      const current = new Map<PlannedTask, { index: number; abort: AbortController; overMemory: string | null }>();
      // Over the ceiling, the worker on the point with the largest estimate is stopped (with one
      // worker, exactly the point that went over); its point is recorded as failed, the rest goes on.
      watch = setInterval(() => {
        const rss = process.memoryUsage.rss();
        if (rss <= ceilings.processBytes) return;
        let heaviest: { index: number; abort: AbortController; overMemory: string | null } | null = null;
        for (const c of current.values()) {
          if (
            c.overMemory === null &&
            (!heaviest || sizes.plans[c.index].memory.totalBytes > sizes.plans[heaviest.index].memory.totalBytes)
          )
            heaviest = c;
        }
        if (!heaviest) return;
        heaviest.overMemory =
          `the scan's resident memory (${formatBytes(rss)}) went over its ceiling (${formatBytes(ceilings.processBytes)}: --max-memory ${formatBytes(maxMemory)} and a JS heap of ${ceilings.heapMb} MiB` +
          ` for each of ${workers} worker${workers === 1 ? '' : 's'}, beside the main thread); of the points being solved this one had the largest estimate (${formatBytes(sizes.plans[heaviest.index].memory.totalBytes)}), and its worker was stopped`;
        heaviest.abort.abort();
      }, MEMORY_WATCH_MS);
      watch.unref();
      // A worker with nothing queued takes the unstarted second half of the busiest task. Along a
      // line the taken piece costs one lead-in solve, so it must hold at least two points.
      const takeWork = (): PlannedTask | null => {
        let busiest: PlannedTask | null = null;
        let most = 0;
        for (const [task, claims] of running) {
          const left = unclaimed(claims);
          if (left > most) [busiest, most] = [task, left];
        }
        const cut = busiest && takeTail(running.get(busiest)!, continuous ? 2 : 1);
        if (!busiest || !cut) return null;
        const points = busiest.points.slice(cut[0], cut[1]);
        const leadIn = continuous ? busiest.points[cut[0] - 1] : undefined;
        busiest.points = busiest.points.slice(0, cut[0]);
        return {
          points,
          leadIn,
          cost: [...points, ...(leadIn ? [leadIn] : [])].reduce((sum, p) => sum + costs[p.index], 0),
        };
      };
      const pump = (): void => {
        while (!stopping && inflight < workers) {
          const task = queue.shift() ?? takeWork();
          if (!task) break;
          start(task);
        }
        if (inflight === 0) resolve();
      };
      const start = (task: PlannedTask): void => {
        inflight++;
        const claims = newClaims(task.points.length);
        running.set(task, claims);
        const { port1, port2 } = new MessageChannel();
        const reported = new Set<number>();
        // Before its first point a task solves its lead-in, which the watch counts as that point.
        const now = {
          index: (task.leadIn ?? task.points[0]).index,
          abort: new AbortController(),
          overMemory: null as string | null,
        };
        current.set(task, now);
        port1.on('message', (message: TaskMessage) => {
          if (message.kind === 'start') now.index = message.index;
          if (message.kind === 'record' && !reported.has(message.record.index)) {
            reported.add(message.record.index);
            write(message.record);
          }
        });
        const settle = async (error: unknown): Promise<void> => {
          // Records travel on their own port; let every one posted before the end arrive.
          const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
          if (error) await sleep(100);
          else for (let waited = 0; reported.size < task.points.length && waited < 5000; waited++) await sleep(1);
          port1.close();
          running.delete(task);
          current.delete(task);
          inflight--;
          if (error && !stopping) {
            const left = task.points.filter((p) => !reported.has(p.index));
            if (left.length > 0) {
              // Points run in order, so the first unreported one is the point the worker died on.
              const [dead, ...rest] = left;
              write({
                index: dead.index,
                params: dead.params,
                status: 'failed',
                error: now.overMemory ?? workerStopReason(error, ceilings.heapMb),
                iterations: 0,
                seconds: 0,
                warm_start: false,
                overlap_previous: null,
                worker: -1,
                finished: new Date().toISOString(),
              });
              if (rest.length > 0) queue.unshift({ points: rest, cost: rest.reduce((s, p) => s + costs[p.index], 0) });
            }
          }
          pump();
        };
        activePool
          .run(
            {
              points: task.points.map((p) => ({ index: p.index, params: p.params, raw: p.raw })),
              leadIn: task.leadIn
                ? { index: task.leadIn.index, params: task.leadIn.params, raw: task.leadIn.raw }
                : undefined,
              maxMemory,
              warmStart: options.warmStart !== false,
              threads: threadsPerPoint,
              claims,
              port: port2,
            },
            { transferList: [port2], signal: now.abort.signal },
          )
          .then(
            () => settle(null),
            (e: unknown) => settle(e),
          );
      };
      if (options.handleSignals) {
        for (const signal of ['SIGINT', 'SIGTERM'] as NodeJS.Signals[]) {
          const handler = (): void => {
            if (stopping) return;
            stopping = true;
            // Records are written synchronously between messages, so none is ever half written;
            // points still being solved are simply pending on resume.
            void activePool.destroy();
          };
          process.on(signal, handler);
          signalHandlers.push([signal, handler]);
        }
      }
      pump();
    });
    if (watch) clearInterval(watch);
    progress.stop();
    if (writeError instanceof FileSystemError) {
      throw new FileSystemError(
        `${writeError.message}; every finished point is kept: once that is fixed, resume with: ${resumeCommand}`,
      );
    }
    if (writeError) throw writeError;
    const result = outcome(ran, stopping);
    if (stopping) {
      say(
        `interrupted: ${result.done} done, ${result.failed} failed, ${result.pending} pending of ${total}; every finished point is saved in ${dir}`,
      );
      say(`resume with: ${resumeCommand}`);
    } else {
      say(
        `scan finished: ${result.done} done, ${result.failed} failed of ${total} (${ran} solved now, ${result.seconds.toFixed(1)} s); run folder ${dir}`,
      );
      say(`results: ${shellCommand(program, ['summary', dir])}  (--csv, --json, --long)`);
    }
    return result;
  } finally {
    if (watch) clearInterval(watch);
    for (const [signal, handler] of signalHandlers) process.off(signal, handler);
    if (pool) await pool.destroy().catch(() => undefined);
    writer.close();
  }
}
