// The trace report's input: from a trace run folder (`evolve --out`), or from frames held in
// memory (the demo). Each trace's frames become the series the report draws; the spec becomes a
// sentence and its keys as run.

import path from 'node:path';
import { OptionValueError } from '../../errors/errors.js';
import type { EvolveRunContents, Trace } from '../../dynamics/evolveRun.js';
import { validateSpec } from '../../spec/spec.js';
import { describeUnits, labUnits } from '../../spec/units.js';
import type { EvolveSection } from '../../spec/evolveSection.js';
import { fmt, plural } from '../../format/tables.js';
import { cutText } from '../../spec/validate.js';
import type { TraceReportInput, TraceView } from './traceReport.js';

/** A recorded time as the report reads it: a run folder's frame, or an evolution's in memory. */
export interface FrameLike {
  time: number;
  time_ms: number | null;
  observables: object;
  error_bound: number;
}

export type TraceLike = Omit<Trace, 'frames' | 'stats'> & { frames: FrameLike[]; stats?: Record<string, number> };

/** `sum_n n q[n]`: the level summed over the particles of one site. */
function summedLevel(row: number[]): number {
  let s = 0;
  for (let n = 1; n < row.length; n++) s += n * row[n];
  return s;
}

/** The series of one trace, each indexed by recorded time first. */
export function traceView(trace: TraceLike): TraceView {
  const observables = trace.frames.map((f) => f.observables as Record<string, unknown>);
  const scalar = (name: string) => observables.map((o) => o[name] as number);
  const hasDensity = observables.length > 0 && observables.every((o) => Array.isArray(o.density));
  const hasOverlap = observables.length > 0 && observables.every((o) => typeof o.ground_overlap === 'number');
  const hasMs = trace.frames.length > 0 && trace.frames.every((f) => f.time_ms !== null);
  return {
    point: trace.point,
    params: trace.params,
    status: trace.status,
    error: trace.error,
    times: trace.frames.map((f) => f.time),
    timesMs: hasMs ? trace.frames.map((f) => f.time_ms!) : null,
    levelMap: observables.map((o) => (o.populations as number[][]).map(summedLevel)),
    densityMap: hasDensity ? observables.map((o) => o.density as number[]) : null,
    returnProbability: scalar('return_probability'),
    stringWidth: scalar('string_width'),
    energy: scalar('energy'),
    norm: scalar('norm'),
    groundOverlap: hasOverlap ? scalar('ground_overlap') : null,
    errorBound: trace.frames.map((f) => f.error_bound),
    stats: trace.stats ?? null,
    notes: trace.notes,
  };
}

/** Values longer than this are cut in the spec table. */
const VALUE_TEXT_LIMIT = 120;

/** The spec's keys as key paths and their values, in the spec's order (tables of lists as JSON). */
export function specEntries(raw: unknown, prefix = ''): [string, string][] {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw))
    return [[prefix, cutText(JSON.stringify(raw) ?? String(raw), VALUE_TEXT_LIMIT)]];
  const out: [string, string][] = [];
  for (const [key, value] of Object.entries(raw as Record<string, unknown>)) {
    const at = prefix ? `${prefix}.${key}` : key;
    if (typeof value === 'object' && value !== null && !Array.isArray(value)) out.push(...specEntries(value, at));
    else out.push([at, cutText(typeof value === 'string' ? value : JSON.stringify(value), VALUE_TEXT_LIMIT)]);
  }
  return out;
}

/** One sentence on the model and the trace, from the validated spec; null when it does not validate. */
function specSentence(raw: Record<string, unknown>): { sentence: string; unitLines: string[] } | null {
  let spec;
  try {
    spec = validateSpec(structuredClone(raw));
  } catch {
    return null;
  }
  const { chain, levels, exchange, particles } = spec;
  const evolve = spec.extra.evolve as EvolveSection | undefined;
  const kind =
    particles.kind === 'pinned'
      ? 'one pinned particle per site'
      : `${plural(particles.number, particles.kind === 'fermion' ? 'fermion' : `${particles.kind} boson`)}`;
  const parts = [
    `${chain.sites} sites (${chain.boundary} chain) × ${levels.count} levels (${levels.boundary} ladder), ${kind}`,
    `exchange V = ${fmt(exchange.strength, 6)} (${exchange.range === 'nearest' ? 'nearest neighbours' : 'dipolar 1/r³'})`,
    `tunnelling J = ${levels.tunnelling.length > 0 ? levels.tunnelling.map((j) => fmt(j, 6)).join(', ') : 'none'}`,
  ];
  if (evolve) {
    const t = evolve.times;
    const unit = evolve.timeUnit === 'ms' ? ' ms' : '';
    const initial =
      evolve.initial.kind === 'ground_state'
        ? 'the ground state' + (evolve.initial.changes.length > 0 ? ' of the spec with keys changed (a quench)' : '')
        : `levels [${evolve.initial.levels?.join(', ') ?? 'all 0'}]${evolve.initial.pulses.length > 0 ? ` with ${plural(evolve.initial.pulses.length, 'pulse')}` : ''}`;
    parts.push(
      `from ${initial}`,
      `${plural(t.length, 'recorded time')} from ${fmt(t[0], 6)} to ${fmt(t[t.length - 1], 6)}${unit}`,
      `tolerance ${evolve.tolerance}, Krylov size ${evolve.krylov}`,
    );
    if (evolve.ramps.length > 0) parts.push(`ramping ${evolve.ramps.map((r) => r.key).join(', ')}`);
  }
  const units = labUnits(spec);
  return { sentence: `${parts.join('; ')}.`, unitLines: units ? describeUnits(units) : [] };
}

/** The report's input around traces already read: the spec's summary and the notes of each trace. */
export function traceReportInput(options: {
  title: string;
  about: string[];
  spec: Record<string, unknown>;
  traces: TraceLike[];
  keys: string[];
  energyUnitHz: number | null;
  point?: number;
}): TraceReportInput {
  const described = specSentence(options.spec);
  const views = options.traces.map(traceView);
  const notes: string[] = [];
  for (const t of views) {
    const label = options.keys.length > 0 ? `point ${t.point}: ` : '';
    for (const n of t.notes) notes.push(`${label}${n}`);
    if (t.status === 'failed') notes.push(`${label || 'the trace '}failed: ${t.error ?? 'no reason recorded'}`);
  }
  return {
    title: options.title,
    about: options.about,
    specSentence: described?.sentence ?? 'The spec as run:',
    specEntries: specEntries(options.spec),
    unitLines: described?.unitLines ?? [],
    energyUnitHz: options.energyUnitHz,
    keys: options.keys,
    traces: views,
    chosenPoint: options.point,
    notes,
  };
}

/** Everything the report of a trace run folder needs; `point` draws that trace's heat maps only. */
export function traceReportInputFromRun(
  contents: EvolveRunContents,
  options: { point?: number } = {},
): TraceReportInput {
  const { manifest } = contents;
  if (options.point !== undefined && !contents.traces.some((t) => t.point === options.point && t.frames.length > 0)) {
    const recorded = contents.traces.filter((t) => t.frames.length > 0).map((t) => t.point);
    throw new OptionValueError(
      'point',
      String(options.point),
      `no trace with recorded times has that index in ${contents.dir} (${recorded.length > 0 ? `traces ${recorded.join(', ')}` : 'none has recorded times'})`,
    );
  }
  const specName = typeof manifest.spec_path === 'string' ? path.basename(manifest.spec_path) : 'trace';
  const hz = manifest.energy_unit_hz;
  return traceReportInput({
    title: `rungchain trace report: ${specName}`,
    about: [`Run folder ${contents.dir}, started ${String(manifest.created)} (rungchain ${String(manifest.version)}).`],
    spec: (manifest.spec ?? {}) as Record<string, unknown>,
    traces: contents.traces,
    keys: contents.keys,
    energyUnitHz: typeof hz === 'number' ? hz : null,
    point: options.point,
  });
}
