// Handing a scan's tasks to the worker pool, largest first: a worker with nothing queued takes the
// unstarted tail of the busiest task; a worker that dies has its point recorded as failed and the
// rest of its task queued again; a memory watch stops the heaviest point's worker when the scan
// outgrows its ceiling.

import { MessageChannel } from 'node:worker_threads';
import type { Piscina } from 'piscina';
import { formatBytes } from '../format/bytes.js';
import { newClaims, takeTail, unclaimed } from './claims.js';
import type { ScanRecord } from './record.js';
import type { PlannedTask } from './taskPlan.js';
import type { TaskMessage } from './task.js';

/** How often the scan compares its resident memory with the workers' ceiling. */
const MEMORY_WATCH_MS = 100;

export interface DispatchSetup {
  pool: Piscina;
  /** Tasks in the order they start (see planTasks). */
  queue: PlannedTask[];
  workers: number;
  threadsPerPoint: number;
  /** Neighbours along a line share a basis (see linesAreContinuous): a taken tail then gets a lead-in. */
  continuous: boolean;
  costs: number[];
  /** Each point's memory estimate, bytes: over the ceiling the largest running one is stopped. */
  pointBytes: number[];
  maxMemory: number;
  /** How the user sets `maxMemory` (the command line's flag), named in messages about it. */
  memoryLimitName?: string;
  /** See workerCeilings. */
  ceilings: { heapMb: number; processBytes: number };
  warmStart: boolean;
  /** Takes each point's record as it arrives, and the failure of a point whose worker died. */
  write(record: ScanRecord): void;
}

/** The point a running task is on, and how to stop its worker. */
interface RunningPoint {
  index: number;
  abort: AbortController;
  overMemory: string | null;
}

/** Why a worker stopped, for the failed point's record. */
function workerStopReason(error: unknown, heapMb: number): string {
  const code = (error as { code?: unknown } | null)?.code;
  if (code === 'ERR_WORKER_OUT_OF_MEMORY')
    return `its JS heap went over the worker's ceiling of ${heapMb} MiB (ERR_WORKER_OUT_OF_MEMORY)`;
  const reason = error instanceof Error ? error.message : String(error);
  return `the worker stopped while solving this point (${reason}); out of memory is the usual cause`;
}

const taskPoint = (p: PlannedTask['points'][number]) => ({ index: p.index, params: p.params, raw: p.raw });

export class TaskDispatch {
  /** Set once the scan stops handing out work (a signal, a failed write); running points are then left pending. */
  stopping = false;
  private readonly setup: DispatchSetup;
  private inflight = 0;
  private readonly claimsOf = new Map<PlannedTask, Int32Array>();
  private readonly runningPoint = new Map<PlannedTask, RunningPoint>();
  private watch: ReturnType<typeof setInterval> | null = null;
  private allSettled: () => void = () => undefined;

  constructor(setup: DispatchSetup) {
    this.setup = setup;
  }

  /** Runs the tasks; resolves once no task is running and none is left to start (or the scan stopped). */
  run(): Promise<void> {
    return new Promise<void>((resolve) => {
      this.allSettled = resolve;
      this.watch = setInterval(() => this.watchMemory(), MEMORY_WATCH_MS);
      this.watch.unref();
      this.pump();
    });
  }

  /** Stops handing out work and ends the workers. Records are written synchronously between messages, so none is ever half written; points being solved stay pending for a resume. */
  stop(): void {
    this.stopping = true;
    void this.setup.pool.destroy();
  }

  endMemoryWatch(): void {
    if (this.watch) clearInterval(this.watch);
    this.watch = null;
  }

  /** Over the ceiling, the worker on the point with the largest estimate is stopped (with one worker, exactly the point that went over); its point is recorded as failed, the rest goes on. */
  private watchMemory(): void {
    const { ceilings, pointBytes, maxMemory, memoryLimitName, workers } = this.setup;
    const rss = process.memoryUsage.rss();
    if (rss <= ceilings.processBytes) return;
    let heaviest: RunningPoint | null = null;
    for (const c of this.runningPoint.values()) {
      if (c.overMemory === null && (!heaviest || pointBytes[c.index] > pointBytes[heaviest.index])) heaviest = c;
    }
    if (!heaviest) return;
    heaviest.overMemory =
      `the scan's resident memory (${formatBytes(rss)}) went over its ceiling (${formatBytes(ceilings.processBytes)}: ${memoryLimitName ?? 'memory limit'} ${formatBytes(maxMemory)} and a JS heap of ${ceilings.heapMb} MiB` +
      ` for each of ${workers} worker${workers === 1 ? '' : 's'}, beside the main thread); of the points being solved this one had the largest estimate (${formatBytes(pointBytes[heaviest.index])}), and its worker was stopped`;
    heaviest.abort.abort();
  }

  /** The unstarted second half of the busiest task, for a worker with nothing queued. Along a line the taken piece costs one lead-in solve, so it must hold at least two points. */
  private takeWork(): PlannedTask | null {
    const { continuous, costs } = this.setup;
    let busiest: PlannedTask | null = null;
    let most = 0;
    for (const [task, claims] of this.claimsOf) {
      const left = unclaimed(claims);
      if (left > most) [busiest, most] = [task, left];
    }
    const cut = busiest && takeTail(this.claimsOf.get(busiest)!, continuous ? 2 : 1);
    if (!busiest || !cut) return null;
    const points = busiest.points.slice(cut[0], cut[1]);
    const leadIn = continuous ? busiest.points[cut[0] - 1] : undefined;
    busiest.points = busiest.points.slice(0, cut[0]);
    return {
      points,
      leadIn,
      cost: [...points, ...(leadIn ? [leadIn] : [])].reduce((sum, p) => sum + costs[p.index], 0),
    };
  }

  private pump(): void {
    while (!this.stopping && this.inflight < this.setup.workers) {
      const task = this.setup.queue.shift() ?? this.takeWork();
      if (!task) break;
      this.start(task);
    }
    if (this.inflight === 0) this.allSettled();
  }

  private start(task: PlannedTask): void {
    const { pool, maxMemory, memoryLimitName, warmStart, threadsPerPoint } = this.setup;
    this.inflight++;
    const claims = newClaims(task.points.length);
    this.claimsOf.set(task, claims);
    const { port1, port2 } = new MessageChannel();
    const reported = new Set<number>();
    // Before its first point a task solves its lead-in, which the watch counts as that point.
    const now: RunningPoint = {
      index: (task.leadIn ?? task.points[0]).index,
      abort: new AbortController(),
      overMemory: null,
    };
    this.runningPoint.set(task, now);
    port1.on('message', (message: TaskMessage) => {
      if (message.kind === 'start') now.index = message.index;
      if (message.kind === 'record' && !reported.has(message.record.index)) {
        reported.add(message.record.index);
        this.setup.write(message.record);
      }
    });
    pool
      .run(
        {
          points: task.points.map(taskPoint),
          leadIn: task.leadIn ? taskPoint(task.leadIn) : undefined,
          maxMemory,
          memoryLimitName,
          warmStart,
          threads: threadsPerPoint,
          claims,
          port: port2,
        },
        { transferList: [port2], signal: now.abort.signal },
      )
      .then(
        () => this.settle(task, now, port1, reported, null),
        (e: unknown) => this.settle(task, now, port1, reported, e),
      );
  }

  private async settle(
    task: PlannedTask,
    now: RunningPoint,
    port: MessageChannel['port1'],
    reported: Set<number>,
    error: unknown,
  ): Promise<void> {
    // Records travel on their own port; let every one posted before the end arrive.
    const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
    if (error) await sleep(100);
    else for (let waited = 0; reported.size < task.points.length && waited < 5000; waited++) await sleep(1);
    port.close();
    this.claimsOf.delete(task);
    this.runningPoint.delete(task);
    this.inflight--;
    if (error && !this.stopping) this.recordDeadWorker(task, now, reported, error);
    this.pump();
  }

  /** Points run in order, so the first unreported one is the point the worker died on: it is recorded as failed, the rest queued again. */
  private recordDeadWorker(task: PlannedTask, now: RunningPoint, reported: Set<number>, error: unknown): void {
    const left = task.points.filter((p) => !reported.has(p.index));
    if (left.length === 0) return;
    const [dead, ...rest] = left;
    this.setup.write({
      index: dead.index,
      params: dead.params,
      status: 'failed',
      error: now.overMemory ?? workerStopReason(error, this.setup.ceilings.heapMb),
      iterations: 0,
      seconds: 0,
      warm_start: false,
      overlap_previous: null,
      worker: -1,
      finished: new Date().toISOString(),
    });
    if (rest.length > 0)
      this.setup.queue.unshift({ points: rest, cost: rest.reduce((s, p) => s + this.setup.costs[p.index], 0) });
  }
}
