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
//   checkpoint-<point>.bin   the state of an unfinished trace (deleted when the trace is done):
//     bytes 0..3 "RCK1", 4..7 uint32 header length h (LE), then h bytes of JSON header
//     { identity, point, dim, next_frame, time, error_bound, matvecs, steps, crc32 }, then psi(time)
//     and psi(0) as little-endian float64, interleaved re,im, 2*dim each. Written atomically.
// A frame already in the records is never written twice: a resume from an older checkpoint
// recomputes those frames and skips them.

import { existsSync, readdirSync, readFileSync, unlinkSync } from 'node:fs';
import path from 'node:path';
import { crc32 } from 'node:zlib';
import cliProgress from 'cli-progress';
import { FileSystemError, RunFileError, SpecError, isRungchainError } from '../errors/errors.js';
import {
  Evolution,
  planEvolution,
  timeFirstObservables,
  type EvolutionCheckpoint,
  type EvolutionFrame,
  type EvolutionPlan,
} from './evolution.js';
import { readRun, runIdentity, RunWriter, writeFileAtomic } from '../runs/runFiles.js';
import { defaultMemoryLimit } from '../point/memory.js';
import { expandScan, formatParams, type ScanParams } from '../scan/plan.js';
import { defaultRunDir } from '../runs/folders.js';
import { rungchainVersion } from '../runs/version.js';
import { loadSpec, type Spec } from '../spec/spec.js';
import { labUnits, describeUnits } from '../spec/units.js';
import { columnScale, csv, fmt, fmtNoise, fmtSmall, plural, shellCommand, table } from '../format/tables.js';

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
// Checkpoints

const CHECKPOINT_MAGIC = Buffer.from('RCK1', 'latin1');

export function checkpointPath(dir: string, point: number): string {
  return path.join(dir, `checkpoint-${point}.bin`);
}

/** Deletes a point's checkpoint and any temporary copy a killed writer left half written. */
export function removeCheckpoint(dir: string, point: number): void {
  const name = path.basename(checkpointPath(dir, point));
  for (const file of readdirSync(dir)) {
    if (file === name || file.startsWith(`${name}.tmp.`)) unlinkSync(path.join(dir, file));
  }
}

export function writeCheckpoint(dir: string, identity: string, point: number, c: EvolutionCheckpoint): void {
  const dim = c.psi.length / 2;
  const data = Buffer.alloc(2 * c.psi.length * 8);
  for (let k = 0; k < c.psi.length; k++) {
    data.writeDoubleLE(c.psi[k], 8 * k);
    data.writeDoubleLE(c.psi0[k], 8 * (c.psi.length + k));
  }
  const header = Buffer.from(
    JSON.stringify({
      identity,
      point,
      dim,
      next_frame: c.nextFrame,
      time: c.time,
      error_bound: c.errorBound,
      matvecs: c.matvecs,
      steps: c.steps,
      crc32: crc32(data),
    }),
  );
  const length = Buffer.alloc(4);
  length.writeUInt32LE(header.length, 0);
  writeFileAtomic(checkpointPath(dir, point), Buffer.concat([CHECKPOINT_MAGIC, length, header, data]));
}

/** The checkpoint of a point, or null when there is none or it does not belong to this run (then it is ignored, not trusted). */
export function readCheckpoint(dir: string, identity: string, point: number, dim: number): EvolutionCheckpoint | null {
  const file = checkpointPath(dir, point);
  if (!existsSync(file)) return null;
  const buffer = readFileSync(file);
  if (buffer.length < 8 || buffer.compare(CHECKPOINT_MAGIC, 0, 4, 0, 4) !== 0) return null;
  const headerLength = buffer.readUInt32LE(4);
  let header: Record<string, number | string>;
  try {
    header = JSON.parse(buffer.subarray(8, 8 + headerLength).toString('utf8')) as Record<string, number | string>;
  } catch {
    return null;
  }
  const data = buffer.subarray(8 + headerLength);
  if (
    header.identity !== identity ||
    header.point !== point ||
    header.dim !== dim ||
    data.length !== 32 * dim ||
    crc32(data) !== header.crc32
  ) {
    return null;
  }
  const psi = new Float64Array(2 * dim);
  const psi0 = new Float64Array(2 * dim);
  for (let k = 0; k < 2 * dim; k++) {
    psi[k] = data.readDoubleLE(8 * k);
    psi0[k] = data.readDoubleLE(8 * (2 * dim + k));
  }
  return {
    nextFrame: Number(header.next_frame),
    time: Number(header.time),
    psi,
    psi0,
    errorBound: Number(header.error_bound),
    matvecs: Number(header.matvecs),
    steps: Number(header.steps),
  };
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

const SCALARS = ['energy', 'norm', 'return_probability', 'string_width', 'ground_overlap'] as const;

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
        ...SCALARS.map((s) => o[s]),
        mean,
        f.error_bound,
      ]);
    }
  }
  return csv(['point', ...contents.keys, 'frame', 'time', 'time_ms', ...SCALARS, 'mean_level', 'error_bound'], rows);
}

/** Long CSV: per-site and per-level observables, one value per row. */
export function tracesLongCsv(contents: EvolveRunContents): string {
  const rows: unknown[][] = [];
  for (const t of contents.traces) {
    const lead = [t.point, ...contents.keys.map((k) => t.params[k])];
    for (const f of t.frames) {
      const o = f.observables;
      (o.populations as number[][]).forEach((p, i) =>
        p.forEach((v, n) => rows.push([...lead, f.time, f.time_ms, 'populations', i, n, v])),
      );
      (o.level_mean as number[]).forEach((v, i) => rows.push([...lead, f.time, f.time_ms, 'level_mean', i, null, v]));
      (o.spread as number[]).forEach((v, i) => rows.push([...lead, f.time, f.time_ms, 'spread', i, null, v]));
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

export interface EvolveRunOptions {
  specPath: string;
  /** How the printed commands start the program (the command line passes its own invocation). */
  program?: string;
  overrides?: string[];
  /** Run folder; null writes nothing (single spec only). Default for scans: runs/<spec name>-<identity>. */
  out?: string | null;
  maxMemory?: number;
  /** --max-memory as the user wrote it, repeated in the command that resumes. */
  maxMemoryText?: string;
  progress?: 'auto' | 'bar' | 'lines' | 'none';
  stream?: NodeJS.WriteStream;
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
  resumeCommand: string | null;
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

export async function runEvolveCommand(options: EvolveRunOptions): Promise<EvolveRunOutcome> {
  const stream = options.stream ?? process.stderr;
  const overrides = options.overrides ?? [];
  const { raw, spec } = loadSpec(options.specPath, overrides);
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
  const maxMemory = options.maxMemory ?? defaultMemoryLimit();
  // Plan every point before writing anything, so bad input leaves no folder behind.
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

  const dir = options.out === undefined ? (isScan ? defaultRunDir(options.specPath, identity) : null) : options.out;
  const resumeCommand =
    dir === null
      ? null
      : shellCommand(options.program ?? 'rungchain', [
          'evolve',
          options.specPath,
          ...overrides.flatMap((o) => ['--set', o]),
          ...(options.checkpointSeconds !== undefined ? ['--checkpoint-every', String(options.checkpointSeconds)] : []),
          ...(options.maxMemoryText !== undefined ? ['--max-memory', options.maxMemoryText] : []),
          ...(options.retryFailed ? ['--retry-failed'] : []),
          '--out',
          dir,
        ]);
  const units = labUnits(spec);
  const energyUnitHz = units?.energyUnitHz ?? null;
  const writer =
    dir === null
      ? null
      : RunWriter.open(dir, {
          kind: 'evolve',
          identity,
          version: rungchainVersion(),
          mismatchHint: `choose another --out, or delete ${dir} to start over`,
          fields: {
            spec_path: options.specPath,
            overrides,
            spec: raw,
            axes,
            points: jobs.map((j) => ({ point: j.point, params: j.params })),
            energy_unit_hz: energyUnitHz,
            time_unit_ms: units?.timeUnitMs ?? null,
          },
        });

  const say = (line: string): void => {
    if (options.progress !== 'none') stream.write(line + '\n');
  };
  const existing = writer
    ? tracesOf(writer.existing, jobs)
    : jobs.map((j): Trace => ({ point: j.point, params: j.params, status: 'pending', frames: [], notes: [] }));
  const byPoint = new Map(existing.map((t) => [t.point, t]));
  const notes: string[] = [];
  let stopping = false;
  const handlers: [NodeJS.Signals, () => void][] = [];
  // Without a run folder there is nothing to save: Ctrl-C simply stops the process.
  if (options.handleSignals && writer !== null) {
    for (const signal of ['SIGINT', 'SIGTERM'] as NodeJS.Signals[]) {
      const handler = (): void => {
        stopping = true;
      };
      process.on(signal, handler);
      handlers.push([signal, handler]);
    }
  }
  const checkpointSeconds = options.checkpointSeconds ?? 30;
  const mode =
    options.progress === undefined || options.progress === 'auto' ? (stream.isTTY ? 'bar' : 'lines') : options.progress;
  const totalFrames = jobs.reduce((n, j) => {
    const p = plans.get(j.point);
    return n + (p instanceof Error || p === undefined ? 0 : p.times.length);
  }, 0);
  let framesDone = existing.reduce((n, t) => n + t.frames.length, 0);
  const bar =
    mode === 'bar'
      ? new cliProgress.SingleBar(
          {
            stream,
            format: ' {bar} {value}/{total} times | t = {t} of {end}',
            hideCursor: true,
            clearOnComplete: false,
            fps: 5,
          },
          cliProgress.Presets.shades_classic,
        )
      : null;
  bar?.start(Math.max(1, totalFrames), Math.min(framesDone, totalFrames), { t: '0', end: '?' });
  if (writer && dir !== null) {
    // We hold the lock: temporary checkpoint files are left from a writer that was killed mid-write.
    for (const file of readdirSync(dir)) if (/^checkpoint-\d+\.bin\.tmp\./.test(file)) unlinkSync(path.join(dir, file));
  }
  if (writer && writer.cutBytes > 0)
    say(`dropped a torn last record (${writer.cutBytes} bytes, a write cut short); it is computed again`);

  try {
    for (const job of jobs) {
      if (stopping) break;
      const trace = byPoint.get(job.point) as Trace;
      if (trace.status === 'done' || (trace.status === 'failed' && !options.retryFailed)) continue;
      const plan = plans.get(job.point) as EvolutionPlan | Error;
      const label = isScan ? `point ${job.point} (${formatParams(job.params)})` : 'trace';
      const finish = (record: TraceRecord): void => {
        writer?.append(record as unknown as Record<string, unknown>);
        trace.status = record.status;
        trace.error = record.error;
        trace.stats = record.stats;
        trace.notes = record.notes ?? [];
        if (dir !== null) removeCheckpoint(dir, job.point);
      };
      if (plan instanceof Error) {
        finish({
          kind: 'trace',
          point: job.point,
          params: job.params,
          status: 'failed',
          error: errorText(plan),
          finished: new Date().toISOString(),
        });
        say(`${label}: FAILED ${errorText(plan)}`);
        continue;
      }
      // A failed trace run again keeps the times it recorded before failing: they are never written twice.
      try {
        let resume = dir === null ? null : readCheckpoint(dir, identity, job.point, plan.dimension);
        // Frames already on disk are not written again; a resume from an older checkpoint recomputes them.
        const saved = trace.frames.length;
        // Records are synced before each checkpoint, so a checkpoint ahead of them was not written by this run: ignore it.
        if (resume && resume.nextFrame > saved) resume = null;
        if (resume)
          say(`resuming ${label} at t = ${fmt(resume.time, 6)} (${saved} of ${plan.times.length} times saved)`);
        else if (saved > 0)
          say(`restarting ${label} from t = 0 (${saved} of ${plan.times.length} times saved, no checkpoint)`);
        let lastCheckpoint = performance.now();
        let lastYield = performance.now();
        let lastLine = performance.now();
        const evolution = new Evolution(plan, {
          maxMemory,
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
            framesDone++;
            bar?.update(Math.min(framesDone, totalFrames), {
              t: fmt(frame.time, 5),
              end: fmt(plan.times[plan.times.length - 1], 5),
            });
          },
        });
        for (const note of evolution.notes) notes.push(isScan ? `${label}: ${note}` : note);
        while (!evolution.done) {
          evolution.advance();
          const now = performance.now();
          if (
            writer &&
            dir !== null &&
            now - lastCheckpoint >= checkpointSeconds * 1000 &&
            evolution.nextFrame > 0 &&
            !evolution.done
          ) {
            writeCheckpoint(dir, identity, job.point, evolution.checkpoint());
            lastCheckpoint = performance.now();
          }
          if (mode === 'lines' && now - lastLine >= 10_000) {
            say(
              `${label}: t = ${fmt(evolution.time, 6)} of ${fmt(plan.times[plan.times.length - 1], 6)}, ${evolution.nextFrame}/${plan.times.length} times`,
            );
            lastLine = now;
          }
          // Let signals in every so often; the propagation itself is synchronous.
          if (now - lastYield >= 50) {
            await yieldToEventLoop();
            lastYield = performance.now();
          }
          if (stopping && !evolution.done) {
            if (writer && dir !== null) writeCheckpoint(dir, identity, job.point, evolution.checkpoint());
            break;
          }
        }
        if (!evolution.done) break;
        const result = evolution.result();
        finish({
          kind: 'trace',
          point: job.point,
          params: job.params,
          status: 'done',
          stats: result.stats,
          notes: result.notes,
          finished: new Date().toISOString(),
        });
        if (mode === 'lines' && (isScan || dir !== null))
          say(
            `${label}: done, ${plural(result.stats.steps, 'step')}, ${plural(result.stats.matvecs, 'product')}, error bound ${fmtSmall(result.stats.error_bound, 1)}`,
          );
      } catch (e) {
        // The run folder could not be written (disk full, ...): that is no property of the trace.
        // It stays pending with its checkpoint, and the same command continues it.
        if (e instanceof FileSystemError) throw e;
        if (!isScan && !isRungchainError(e)) throw e;
        if (!isScan) {
          if (writer)
            finish({
              kind: 'trace',
              point: job.point,
              params: job.params,
              status: 'failed',
              error: errorText(e),
              finished: new Date().toISOString(),
            });
          throw e;
        }
        finish({
          kind: 'trace',
          point: job.point,
          params: job.params,
          status: 'failed',
          error: errorText(e),
          finished: new Date().toISOString(),
        });
        say(`${label}: FAILED ${errorText(e)}`);
      }
    }
  } catch (e) {
    if (e instanceof FileSystemError && resumeCommand) {
      throw new FileSystemError(
        `${e.message}; every time recorded so far is kept: once that is fixed, resume with: ${resumeCommand}`,
      );
    }
    throw e;
  } finally {
    bar?.stop();
    for (const [signal, handler] of handlers) process.off(signal, handler);
    writer?.close();
  }
  if (stopping) {
    say(`interrupted: every recorded time is saved${dir ? ` in ${dir}, with the state to continue from` : ''}`);
    if (resumeCommand) say(`resume with: ${resumeCommand}`);
  }
  return {
    dir,
    traces: existing,
    keys: axes.map((a) => a.key),
    interrupted: stopping,
    resumeCommand,
    energyUnitHz,
    unitLines: units ? describeUnits(units) : [],
    notes,
  };
}
