// Time traces in run folders: `rungchain evolve SPEC --out DIR` writes one record per recorded
// time (crash-safe, through src/runs/runFiles.ts) and a checkpoint of the state, so an interrupted
// trace resumes from its last saved state; a spec with a [scan] section runs one trace per point.
//
// Run folder of kind "evolve":
//   manifest.json      spec (after --set), spec path, overrides, points, axes (scans), version, machine
//   records.msgpack    records of two kinds, in the order they were made:
//     { kind: "frame", point, params, index, time, time_ms, observables, error_bound, matvecs }
//         one per recorded time; `observables` holds populations[site][level], level_mean[site],
//         spread[site], string_width, pair_separation[i][j], return_probability, energy, norm and,
//         with a ramp, ground_overlap; time in model units, time_ms with [units] (else null)
//     { kind: "trace", point, params, status: "done" | "failed", error?, stats, notes, finished }
//         when a point's trace ends
//   checkpoint-<point>.bin   the state of an unfinished trace (deleted when the trace is done; see checkpoint.ts)
// A frame already in the records is never written twice: a resume from an older checkpoint
// recomputes those frames and skips them.

import { FileSystemError, RunFileError, SpecError, isRungchainError } from '../errors/errors.js';
import {
  Evolution,
  planEvolution,
  timeFirstObservables,
  type EvolutionFrame,
  type EvolutionPlan,
  type EvolutionResult,
} from './evolution.js';
import { readRun, runIdentity, type RunWriter } from '../runs/runFiles.js';
import { readCheckpoint, removeCheckpoint, removeTemporaryCheckpoints, writeCheckpoint } from './checkpoint.js';
import { failedWriteError, onStopSignals, openRunFolder, tornRecordNote } from '../runs/openRun.js';
import { defaultMemoryLimit } from '../point/memory.js';
import { expandScan, formatParams, type ScanParams } from '../scan/plan.js';
import { defaultRunDir } from '../runs/folders.js';
import { loadSpec, type Spec } from '../spec/spec.js';
import { labUnits, describeUnits, type LabUnits } from '../spec/units.js';
import { columnScale, csv, fmt, fmtNoise, plural, table } from '../format/tables.js';
import { longObservables, TRACE_CSV_SCALARS } from '../observables/catalogue.js';

export interface FrameRecord {
  kind: 'frame';
  point: number;
  params: ScanParams;
  index: number;
  time: number;
  time_ms: number | null;
  observables: Record<string, unknown>;
  error_bound: number;
  matvecs: number;
}

export interface TraceRecord {
  kind: 'trace';
  point: number;
  params: ScanParams;
  status: 'done' | 'failed';
  error?: string;
  stats?: Record<string, number>;
  notes?: string[];
  finished: string;
}

/** One trace: a point's frames in time order and how it ended. */
export interface Trace {
  point: number;
  params: ScanParams;
  status: 'done' | 'failed' | 'pending';
  error?: string;
  frames: FrameRecord[];
  stats?: Record<string, number>;
  notes: string[];
}

// ---------------------------------------------------------------------------------------------
// Reading traces back

export function tracesOf(records: Record<string, unknown>[], points: { point: number; params: ScanParams }[]): Trace[] {
  const traces = new Map<number, Trace>();
  for (const p of points)
    traces.set(p.point, { point: p.point, params: p.params, status: 'pending', frames: [], notes: [] });
  for (const r of records) {
    const trace = traces.get(Number(r.point));
    if (!trace) continue;
    if (r.kind === 'frame') {
      const f = r as unknown as FrameRecord;
      // A point run again after a failure starts its frames over.
      if (f.index < trace.frames.length) trace.frames.length = f.index;
      if (f.index === trace.frames.length) trace.frames.push(f);
    } else if (r.kind === 'trace') {
      const t = r as unknown as TraceRecord;
      trace.status = t.status;
      trace.error = t.error;
      trace.stats = t.stats;
      trace.notes = t.notes ?? [];
    }
  }
  return [...traces.values()];
}

export interface EvolveRunContents {
  dir: string;
  manifest: Record<string, unknown>;
  traces: Trace[];
  /** Scanned key paths, in axis order (empty without [scan]). */
  keys: string[];
}

export function loadEvolveRun(dir: string): EvolveRunContents {
  const run = readRun(dir);
  if (run.manifest.kind !== 'evolve')
    throw new RunFileError(`${dir} holds a ${run.manifest.kind} run, not a time trace`);
  const points = (run.manifest.points as { point: number; params: ScanParams }[]) ?? [];
  const keys = ((run.manifest.axes as { key: string }[] | undefined) ?? []).map((a) => a.key);
  return { dir, manifest: run.manifest, traces: tracesOf(run.records, points), keys };
}

// ---------------------------------------------------------------------------------------------
// Output shapes

/** `{ times, observables }` of one trace, each observable indexed by time first (the `evolve --json` contract). */
export function traceContract(trace: Trace): { times: number[]; observables: Record<string, unknown[]> } {
  return { times: trace.frames.map((f) => f.time), observables: timeFirstObservables(trace.frames) };
}

/** One object per trace: scanned parameters under their key paths, status, times (and ms) and observables. */
export function tracesJson(contents: EvolveRunContents): Record<string, unknown>[] {
  return contents.traces.map((t) => {
    const out: Record<string, unknown> = { point: t.point, ...t.params, status: t.status };
    if (t.error) out.error = t.error;
    const contract = traceContract(t);
    out.times = contract.times;
    out.times_ms = t.frames.length > 0 && t.frames[0].time_ms !== null ? t.frames.map((f) => f.time_ms) : null;
    out.observables = contract.observables;
    if (t.stats) out.stats = t.stats;
    return out;
  });
}

/** Tidy CSV: one row per (point, recorded time) with the scalar observables and the mean level over sites. */
export function tracesCsv(contents: EvolveRunContents): string {
  const rows: unknown[][] = [];
  for (const t of contents.traces) {
    for (const f of t.frames) {
      const o = f.observables;
      const mean = (o.level_mean as number[]).reduce((s, x) => s + x, 0) / (o.level_mean as number[]).length;
      rows.push([
        t.point,
        ...contents.keys.map((k) => t.params[k]),
        f.index,
        f.time,
        f.time_ms,
        ...TRACE_CSV_SCALARS.map((s) => o[s]),
        mean,
        f.error_bound,
      ]);
    }
  }
  return csv(
    ['point', ...contents.keys, 'frame', 'time', 'time_ms', ...TRACE_CSV_SCALARS, 'mean_level', 'error_bound'],
    rows,
  );
}

/** Long CSV: per-site and per-level observables, one value per row. */
export function tracesLongCsv(contents: EvolveRunContents): string {
  const rows: unknown[][] = [];
  for (const t of contents.traces) {
    const lead = [t.point, ...contents.keys.map((k) => t.params[k])];
    for (const f of t.frames) {
      const o = f.observables;
      for (const { name, shape } of longObservables('trace')) {
        if (shape === 'per site and level')
          (o[name] as number[][]).forEach((p, i) =>
            p.forEach((v, n) => rows.push([...lead, f.time, f.time_ms, name, i, n, v])),
          );
        else (o[name] as number[]).forEach((v, i) => rows.push([...lead, f.time, f.time_ms, name, i, null, v]));
      }
    }
  }
  return csv(['point', ...contents.keys, 'time', 'time_ms', 'observable', 'site', 'level', 'value'], rows);
}

/** Readable table of one trace: model time (and ms), energy (and Hz), norm, return probability, width, mean level. */
export function traceText(trace: Trace, energyUnitHz: number | null): string {
  const hasMs = trace.frames.some((f) => f.time_ms !== null);
  const hasOverlap = trace.frames.some((f) => f.observables.ground_overlap !== undefined);
  const header = [
    't',
    ...(hasMs ? ['t [ms]'] : []),
    'energy',
    ...(energyUnitHz !== null ? ['energy [Hz]'] : []),
    'norm',
    'return P',
    'width',
    'mean level',
    ...(hasOverlap ? ['ground overlap'] : []),
  ];
  // Rounding noise: energies against their own scale, probabilities against 1, widths and levels against 1 or their size.
  const energyScale = columnScale(trace.frames.map((f) => f.observables.energy as number));
  const meanLevel = (f: FrameRecord) => {
    const means = f.observables.level_mean as number[];
    return means.reduce((s, x) => s + x, 0) / means.length;
  };
  const widthScale = columnScale(
    trace.frames.map((f) => f.observables.string_width as number),
    1,
  );
  const levelScale = columnScale(trace.frames.map(meanLevel), 1);
  const rows = trace.frames.map((f) => {
    const o = f.observables;
    return [
      fmt(f.time, 6),
      ...(hasMs ? [fmt(f.time_ms, 6)] : []),
      fmtNoise(o.energy as number, energyScale, 9),
      ...(energyUnitHz !== null ? [fmtNoise((o.energy as number) * energyUnitHz, energyScale * energyUnitHz, 7)] : []),
      fmt(o.norm as number, 10),
      fmtNoise(o.return_probability as number, 1, 6),
      fmtNoise(o.string_width as number, widthScale, 6),
      fmtNoise(meanLevel(f), levelScale, 6),
      ...(hasOverlap ? [fmtNoise(o.ground_overlap as number, 1, 6)] : []),
    ];
  });
  return table(header, rows);
}

export function tracesText(contents: EvolveRunContents): string {
  const spec = contents.manifest.energy_unit_hz as number | null | undefined;
  const out: string[] = [];
  for (const t of contents.traces) {
    out.push(
      `point ${t.point}${contents.keys.length > 0 ? ` (${formatParams(t.params)})` : ''}: ${t.status}${t.error ? ` (${t.error})` : ''}, ${plural(t.frames.length, 'time')} recorded`,
    );
    if (t.frames.length > 0) out.push(traceText(t, spec ?? null));
    out.push('');
  }
  return out.join('\n').trimEnd();
}

// ---------------------------------------------------------------------------------------------
// Running into a folder

/** What an evolve run tells as it goes; the command line shows it (a bar, lines, or nothing). */
export interface EvolveReporter {
  /** A line for the user: resuming, failed traces, interrupted. */
  note(line: string): void;
  /** Tracing begins: `total` times to record over every trace, `done` of them saved before. */
  start(done: number, total: number): void;
  /** A time was recorded: `done` of `total` now; the trace is at model time `time` of its last, `end`. */
  recorded(done: number, total: number, time: number, end: number): void;
  /** Every 10 s of a running trace: at `time` of `end`, `recorded` of its `count` times recorded. */
  running(label: string, time: number, end: number, recorded: number, count: number): void;
  /** A trace finished, in a scan or into a run folder. */
  traceDone(label: string, stats: EvolutionResult['stats']): void;
  /** Tracing has ended (before the closing notes). */
  stop(): void;
}

const SILENT: EvolveReporter = {
  note: () => undefined,
  start: () => undefined,
  recorded: () => undefined,
  running: () => undefined,
  traceDone: () => undefined,
  stop: () => undefined,
};

/** How often a running trace reports where it is. */
const RUNNING_REPORT_MS = 10_000;

export interface EvolveRunOptions {
  specPath: string;
  overrides?: string[];
  /** Run folder; null writes nothing (single spec only). Default for scans: runs/<spec name>-<identity>. */
  out?: string | null;
  maxMemory?: number;
  /** How the user sets `maxMemory` (the command line's flag), named when a trace is over it. */
  memoryLimitName?: string;
  /** Where messages and progress go (default: nowhere). */
  report?: EvolveReporter;
  /** What the user can do when the folder holds another run (the command line words it). */
  otherRunHint?: (dir: string) => string;
  /** The command that resumes this run in `dir`, printed after an interruption or a failed write (the command line builds it). */
  resumeCommand?: (dir: string) => string;
  /** Seconds between checkpoints of the state (0: after every recorded time). */
  checkpointSeconds?: number;
  /** Catch SIGINT/SIGTERM: save a checkpoint, keep every record, print how to resume. */
  handleSignals?: boolean;
  /** Run failed points again. */
  retryFailed?: boolean;
}

export interface EvolveRunOutcome {
  dir: string | null;
  traces: Trace[];
  keys: string[];
  interrupted: boolean;
  /** The model's energy unit in Hz when the spec has [units]. */
  energyUnitHz: number | null;
  unitLines: string[];
  notes: string[];
}

interface PointJob {
  point: number;
  params: ScanParams;
  raw: Record<string, unknown>;
  spec: Spec;
}

function errorText(e: unknown): string {
  if (isRungchainError(e)) return `${e.name}: ${e.message}`;
  return e instanceof Error ? `${e.name}: ${e.message}` : String(e);
}

const yieldToEventLoop = (): Promise<void> => new Promise((resolve) => setImmediate(resolve));

/** The traces to run, planned before anything is written, so bad input leaves no folder behind. */
interface PlannedTraces {
  raw: Record<string, unknown>;
  spec: Spec;
  isScan: boolean;
  jobs: PointJob[];
  axes: { key: string; values: unknown[] }[];
  identity: string;
  /** Each point's evolution plan, or why it cannot run (scan points only: a single spec throws). */
  plans: Map<number, EvolutionPlan | Error>;
}

function planTraces(options: EvolveRunOptions): PlannedTraces {
  const { raw, spec } = loadSpec(options.specPath, options.overrides ?? []);
  const isScan = spec.extra.scan !== undefined;
  if (spec.extra.evolve === undefined)
    throw new SpecError('evolve', 'required section is missing: rungchain evolve needs at least evolve.times');

  let jobs: PointJob[];
  let axes: { key: string; values: unknown[] }[] = [];
  let identity: string;
  if (isScan) {
    const plan = expandScan(raw, spec);
    jobs = plan.points.map((p) => ({ point: p.index, params: p.params, raw: p.raw, spec: p.spec }));
    axes = plan.section.axes;
    identity = runIdentity({
      kind: 'evolve',
      spec: raw,
      axes: plan.section.axes.map((a) => ({ key: a.key, values: a.values })),
      zip: plan.section.zip,
    });
  } else {
    jobs = [{ point: 0, params: {}, raw, spec }];
    identity = runIdentity({ kind: 'evolve', spec: raw });
  }
  const plans = new Map<number, EvolutionPlan | Error>();
  for (const job of jobs) {
    try {
      plans.set(job.point, planEvolution(job.raw, job.spec));
    } catch (e) {
      if (!isScan) throw e;
      if (e instanceof SpecError)
        throw new SpecError(e.keyPath, `${e.problem} (in scan point ${job.point}: ${formatParams(job.params)})`);
      plans.set(job.point, e as Error);
    }
  }
  return { raw, spec, isScan, jobs, axes, identity, plans };
}

/** Opens (or resumes) the run folder of the traces. */
function openTraceFolder(
  dir: string,
  options: EvolveRunOptions,
  traces: PlannedTraces,
  units: LabUnits | null,
): RunWriter {
  return openRunFolder({
    kind: 'evolve',
    dir,
    identity: traces.identity,
    specPath: options.specPath,
    overrides: options.overrides ?? [],
    spec: traces.raw,
    otherRunHint: options.otherRunHint?.(dir),
    fields: {
      axes: traces.axes,
      points: traces.jobs.map((j) => ({ point: j.point, params: j.params })),
      energy_unit_hz: units?.energyUnitHz ?? null,
      time_unit_ms: units?.timeUnitMs ?? null,
    },
  });
}

/** Times to record over every trace that can run. */
function timesToRecord(traces: PlannedTraces): number {
  return traces.jobs.reduce((n, j) => {
    const p = traces.plans.get(j.point);
    return n + (p instanceof Error || p === undefined ? 0 : p.times.length);
  }, 0);
}

/** An evolve run under way: where it writes, how it reports, and whether a signal asked it to stop. */
interface TraceRun {
  options: EvolveRunOptions;
  report: EvolveReporter;
  isScan: boolean;
  identity: string;
  dir: string | null;
  writer: RunWriter | null;
  maxMemory: number;
  memoryLimitName: string | undefined;
  checkpointSeconds: number;
  notes: string[];
  frames: { done: number; total: number };
  stopping: boolean;
}

/** Appends a trace's closing record, updates the trace, and deletes its checkpoint. */
function finishTrace(run: TraceRun, trace: Trace, record: TraceRecord): void {
  run.writer?.append(record as unknown as Record<string, unknown>);
  trace.status = record.status;
  trace.error = record.error;
  trace.stats = record.stats;
  trace.notes = record.notes ?? [];
  if (run.dir !== null) removeCheckpoint(run.dir, trace.point);
}

function failedTrace(job: PointJob, error: unknown): TraceRecord {
  return {
    kind: 'trace',
    point: job.point,
    params: job.params,
    status: 'failed',
    error: errorText(error),
    finished: new Date().toISOString(),
  };
}

/**
 * Evolves one point from its checkpoint (or from t = 0), recording each time and saving the
 * state every checkpointSeconds; false when a signal stopped it (its state then saved).
 */
async function evolveTrace(
  run: TraceRun,
  job: PointJob,
  trace: Trace,
  plan: EvolutionPlan,
  label: string,
): Promise<boolean> {
  const { dir, writer, report, identity } = run;
  const end = plan.times[plan.times.length - 1];
  let resume = dir === null ? null : readCheckpoint(dir, identity, job.point, plan.dimension);
  // Frames already on disk are not written again; a resume from an older checkpoint recomputes them.
  const saved = trace.frames.length;
  // Records are synced before each checkpoint, so a checkpoint ahead of them was not written by this run: ignore it.
  if (resume && resume.nextFrame > saved) resume = null;
  if (resume)
    report.note(`resuming ${label} at t = ${fmt(resume.time, 6)} (${saved} of ${plan.times.length} times saved)`);
  else if (saved > 0)
    report.note(`restarting ${label} from t = 0 (${saved} of ${plan.times.length} times saved, no checkpoint)`);
  let lastCheckpoint = performance.now();
  let lastYield = performance.now();
  let lastReport = performance.now();
  const evolution = new Evolution(plan, {
    maxMemory: run.maxMemory,
    memoryLimitName: run.memoryLimitName,
    resume: resume ?? undefined,
    onFrame: (frame: EvolutionFrame) => {
      if (frame.index < trace.frames.length) return;
      const record: FrameRecord = {
        kind: 'frame',
        point: job.point,
        params: job.params,
        index: frame.index,
        time: frame.time,
        time_ms: plan.timesMs ? plan.timesMs[frame.index] : null,
        observables: frame.observables,
        error_bound: frame.error_bound,
        matvecs: frame.matvecs,
      };
      writer?.append(record as unknown as Record<string, unknown>);
      trace.frames.push(record);
      run.frames.done++;
      report.recorded(run.frames.done, run.frames.total, frame.time, end);
    },
  });
  for (const note of evolution.notes) run.notes.push(run.isScan ? `${label}: ${note}` : note);
  while (!evolution.done) {
    evolution.advance();
    const now = performance.now();
    if (
      writer &&
      dir !== null &&
      now - lastCheckpoint >= run.checkpointSeconds * 1000 &&
      evolution.nextFrame > 0 &&
      !evolution.done
    ) {
      writeCheckpoint(dir, identity, job.point, evolution.checkpoint());
      lastCheckpoint = performance.now();
    }
    if (now - lastReport >= RUNNING_REPORT_MS) {
      report.running(label, evolution.time, end, evolution.nextFrame, plan.times.length);
      lastReport = now;
    }
    // Let signals in every so often; the propagation itself is synchronous.
    if (now - lastYield >= 50) {
      await yieldToEventLoop();
      lastYield = performance.now();
    }
    if (run.stopping && !evolution.done) {
      if (writer && dir !== null) writeCheckpoint(dir, identity, job.point, evolution.checkpoint());
      return false;
    }
  }
  const result = evolution.result();
  finishTrace(run, trace, {
    kind: 'trace',
    point: job.point,
    params: job.params,
    status: 'done',
    stats: result.stats,
    notes: result.notes,
    finished: new Date().toISOString(),
  });
  if (run.isScan || dir !== null) report.traceDone(label, result.stats);
  return true;
}

/** Runs every trace not yet done (failed ones too with retryFailed), in point order, until done or stopped. */
async function runTraces(run: TraceRun, traces: PlannedTraces, byPoint: Map<number, Trace>): Promise<void> {
  for (const job of traces.jobs) {
    if (run.stopping) break;
    const trace = byPoint.get(job.point) as Trace;
    if (trace.status === 'done' || (trace.status === 'failed' && !run.options.retryFailed)) continue;
    const plan = traces.plans.get(job.point) as EvolutionPlan | Error;
    const label = run.isScan ? `point ${job.point} (${formatParams(job.params)})` : 'trace';
    if (plan instanceof Error) {
      finishTrace(run, trace, failedTrace(job, plan));
      run.report.note(`${label}: FAILED ${errorText(plan)}`);
      continue;
    }
    // A failed trace run again keeps the times it recorded before failing: they are never written twice.
    try {
      if (!(await evolveTrace(run, job, trace, plan, label))) break;
    } catch (e) {
      // The run folder could not be written (disk full, ...): that is no property of the trace.
      // It stays pending with its checkpoint, and the same command continues it.
      if (e instanceof FileSystemError) throw e;
      if (!run.isScan && !isRungchainError(e)) throw e;
      if (!run.isScan) {
        if (run.writer) finishTrace(run, trace, failedTrace(job, e));
        throw e;
      }
      finishTrace(run, trace, failedTrace(job, e));
      run.report.note(`${label}: FAILED ${errorText(e)}`);
    }
  }
}

/**
 * `rungchain evolve`: one trace, or one per scan point, into a run folder when there is one
 * (resuming what it holds) and back to the caller.
 */
export async function runEvolveCommand(options: EvolveRunOptions): Promise<EvolveRunOutcome> {
  const report = options.report ?? SILENT;
  const traces = planTraces(options);
  const { spec, isScan, jobs, axes, identity } = traces;
  const dir = options.out === undefined ? (isScan ? defaultRunDir(options.specPath, identity) : null) : options.out;
  const resumeCommand = dir !== null && options.resumeCommand ? options.resumeCommand(dir) : null;
  const units = labUnits(spec);
  const energyUnitHz = units?.energyUnitHz ?? null;
  const writer = dir === null ? null : openTraceFolder(dir, options, traces, units);

  const existing = writer
    ? tracesOf(writer.existing, jobs)
    : jobs.map((j): Trace => ({ point: j.point, params: j.params, status: 'pending', frames: [], notes: [] }));
  const run: TraceRun = {
    options,
    report,
    isScan,
    identity,
    dir,
    writer,
    maxMemory: options.maxMemory ?? defaultMemoryLimit(),
    memoryLimitName: options.memoryLimitName,
    checkpointSeconds: options.checkpointSeconds ?? 30,
    notes: [],
    frames: { done: existing.reduce((n, t) => n + t.frames.length, 0), total: timesToRecord(traces) },
    stopping: false,
  };
  // Without a run folder there is nothing to save: Ctrl-C simply stops the process.
  const removeSignalHandlers =
    options.handleSignals && writer !== null
      ? onStopSignals(() => {
          run.stopping = true;
        })
      : () => undefined;
  report.start(run.frames.done, run.frames.total);
  // We hold the lock: temporary checkpoint files are left from a writer that was killed mid-write.
  if (writer && dir !== null) removeTemporaryCheckpoints(dir);
  const torn = writer && tornRecordNote(writer, 'it is computed again');
  if (torn) report.note(torn);

  try {
    await runTraces(run, traces, new Map(existing.map((t) => [t.point, t])));
  } catch (e) {
    if (e instanceof FileSystemError && resumeCommand)
      throw failedWriteError(e, 'every time recorded so far is kept', resumeCommand);
    throw e;
  } finally {
    report.stop();
    removeSignalHandlers();
    writer?.close();
  }
  if (run.stopping) {
    report.note(`interrupted: every recorded time is saved${dir ? ` in ${dir}, with the state to continue from` : ''}`);
    if (resumeCommand) report.note(`resume with: ${resumeCommand}`);
  }
  return {
    dir,
    traces: existing,
    keys: axes.map((a) => a.key),
    interrupted: run.stopping,
    energyUnitHz,
    unitLines: units ? describeUnits(units) : [],
    notes: run.notes,
  };
}
