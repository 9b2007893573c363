// The HTML report of a time trace (`evolve --out`, or the demo's quench): one self-contained file
// like the scan report, drawn by the same plot modules. It holds a short summary of the spec, the
// light cone (each site's mean level against time, as a heat map; the density too for itinerant
// kinds), the return probability, string width and energy against time, and the propagation's
// error bounds. A run of several traces (a spec with [scan]) draws a line per trace in each plot
// and the heat maps of at most MAX_TRACE_MAPS traces.

import type { ScanParams } from '../../scan/plan.js';
import { fmt, fmtSmall, plural } from '../../format/tables.js';
import { observableEntry } from '../../observables/catalogue.js';
import { esc, reportDocument, section } from './html.js';
import { renderLinePlot, type PlotSeries } from './linePlot.js';
import { renderHeatMap } from './heatMap.js';
import { evenlyChosen } from './thinning.js';
import { MAX_TABLE_ROWS, showParams, unitsOf, type Units } from './report.js';

/** Traces whose heat maps are drawn at most (evenly chosen; `--point` picks one). */
export const MAX_TRACE_MAPS = 6;

/** One trace as the report draws it: every series indexed by recorded time first. */
export interface TraceView {
  point: number;
  params: ScanParams;
  status: 'done' | 'failed' | 'pending';
  error?: string;
  /** Recorded times in model units (hbar over the energy unit). */
  times: number[];
  /** The same times in ms when the spec has [units], else null. */
  timesMs: number[] | null;
  /**
   * The light cone: `levelMap[t][i] = sum_n n populations[i][n]` at recorded time t, the level
   * summed over the particles at site i (for pinned chains the mean level <n_i>; with two levels
   * the population of level 1).
   */
  levelMap: number[][];
  /** `density[i]` at each recorded time (itinerant kinds), else null. */
  densityMap: number[][] | null;
  returnProbability: number[];
  stringWidth: number[];
  energy: number[];
  norm: number[];
  /** Weight in the instantaneous ground space (under a ramp), else null. */
  groundOverlap: number[] | null;
  /** Running bound on the 2-norm error of the state at each recorded time. */
  errorBound: number[];
  /** How the trace ran (dimension, krylov, tolerance, steps, matvecs, error_bound, seconds) once done. */
  stats: Record<string, number> | null;
  notes: string[];
}

export interface TraceReportInput {
  title: string;
  /** Lines under the title: where the run is, when it ran. */
  about: string[];
  /** One sentence on the model and the trace, then the spec's keys as run. */
  specSentence: string;
  specEntries: [string, string][];
  /** Laboratory unit lines ([units]), empty without. */
  unitLines: string[];
  /** The model's energy unit in Hz with [units], else null. */
  energyUnitHz: number | null;
  /** Scanned key paths (empty for a single trace). */
  keys: string[];
  traces: TraceView[];
  /** Draw the heat maps of this trace only. */
  chosenPoint?: number;
  notes: string[];
}

/** The time axis every plot shares: ms when every trace has them, else model units. */
interface TimeAxis {
  label: string;
  of: (trace: TraceView) => number[];
}

function timeAxis(traces: TraceView[]): TimeAxis {
  const withFrames = traces.filter((t) => t.times.length > 0);
  if (withFrames.length > 0 && withFrames.every((t) => t.timesMs !== null))
    return { label: 'time t [ms]', of: (t) => t.timesMs! };
  return { label: 'time t [ħ/ε]', of: (t) => t.times };
}

function traceName(trace: TraceView, input: TraceReportInput, units: Units): string {
  return input.keys.length > 0 ? `point ${trace.point}: ${showParams(trace.params, units)}` : '';
}

interface TraceContext {
  input: TraceReportInput;
  units: Units;
  time: TimeAxis;
  /** Traces with at least one recorded time. */
  drawn: TraceView[];
}

function specSection(context: TraceContext): string {
  const { input } = context;
  const rows = input.specEntries
    .slice(0, MAX_TABLE_ROWS)
    .map(([key, value]) => `<tr><td><code>${esc(key)}</code></td><td>${esc(value)}</td></tr>`)
    .join('');
  const table = `<div class="table-wrap"><p class="intro">${esc(input.specSentence)}</p>${input.unitLines
    .map((l) => `<p class="note">${esc(l)}</p>`)
    .join(
      '',
    )}<table class="spec"><tr><th>key</th><th>value</th></tr>${rows}</table><p class="note">The spec as run (after --set); keys it leaves out take their defaults (docs/model.md).</p></div>`;
  return section('spec', 'Model and trace', [table]);
}

/** The light cone: a heat map per drawn trace, time upwards, sites across. */
function lightConeSection(context: TraceContext): string | null {
  const { input, units, time, drawn } = context;
  let shown = input.chosenPoint === undefined ? drawn : drawn.filter((t) => t.point === input.chosenPoint);
  const maps: string[] = [];
  const notes: string[] = [];
  if (shown.length > MAX_TRACE_MAPS) {
    notes.push(
      `heat maps of ${MAX_TRACE_MAPS} of ${shown.length} traces, evenly chosen; \`rungchain report RUN --point INDEX\` draws another`,
    );
    shown = evenlyChosen(shown, MAX_TRACE_MAPS);
  }
  for (const trace of shown) {
    const sites = trace.levelMap[0]?.length ?? 0;
    const name = traceName(trace, input, units);
    const map = (id: string, what: string, z: number[][], zLabel: string) =>
      renderHeatMap({
        id: `${id}-${trace.point}`,
        title: `${what} against time${name ? ` (${name})` : ''}`,
        xLabel: 'site i',
        yLabel: time.label,
        xValues: Array.from({ length: sites }, (_, i) => i),
        yValues: time.of(trace),
        z,
        zLabel,
        // From zero, so an empty site is the darkest colour whatever the largest value.
        range: [0, Math.max(1e-12, ...z.flat())],
        annotate: false,
      });
    // A ladder of one level has no level to climb: only the density moves.
    if (trace.levelMap.some((row) => row.some((v) => v !== 0)) || trace.densityMap === null)
      maps.push(map('light-cone', 'level ⟨n_i⟩ per site', trace.levelMap, '⟨n_i⟩ [levels]'));
    if (trace.densityMap !== null)
      maps.push(map('density-cone', 'particles ⟨N_i⟩ per site', trace.densityMap, '⟨N_i⟩ [particles]'));
  }
  if (maps.length === 0) return null;
  return section(
    'light-cone',
    'Sites against time',
    [...maps, ...notes.map((n) => `<p class="note">${esc(n)}</p>`)],
    'Each site’s level summed over its particles, ⟨n_i⟩ = Σₙ n P_i(n), at every recorded time (time upwards, t = 0 at the bottom): an excitation spreads as a light cone. With two levels this is the population of level 1. Itinerant kinds also show the particles per site.',
  );
}

/** A scalar observable of the trace against time, a line per trace. */
function scalarPlot(
  context: TraceContext,
  id: string,
  name: string,
  values: (t: TraceView) => number[] | null,
): string {
  const { input, units, time, drawn } = context;
  const entry = observableEntry(name)!;
  const scale = entry.energy ? units.energyScale : 1;
  const unit = entry.energy ? units.energy : entry.unit;
  const series: PlotSeries[] = drawn
    .map((t, k) => ({ trace: t, y: values(t), k }))
    .filter((s): s is { trace: TraceView; y: number[]; k: number } => s.y !== null)
    .map(({ trace, y, k }) => ({
      name: traceName(trace, input, units),
      x: time.of(trace),
      y: y.map((v) => v * scale),
      style: k,
    }));
  if (series.length === 0) return '';
  // An energy is rounding below 1e-9 of its scale (at least the model's unit): a conserved 0 stays flat.
  const largest = Math.max(1, ...series.flatMap((s) => s.y.map((v) => Math.abs(v / scale))));
  return renderLinePlot({
    id,
    title: `${entry.title} against time`,
    xLabel: time.label,
    yLabel: unit ? `${entry.short} [${unit}]` : entry.short,
    series,
    yNoise: entry.energy ? 1e-9 * largest * scale : undefined,
  });
}

function observablesSection(context: TraceContext): string | null {
  const plots = [
    scalarPlot(context, 'trace-return-probability', 'return_probability', (t) => t.returnProbability),
    scalarPlot(context, 'trace-string-width', 'string_width', (t) => t.stringWidth),
    scalarPlot(context, 'trace-energy', 'energy', (t) => t.energy),
    scalarPlot(context, 'trace-ground-overlap', 'ground_overlap', (t) => t.groundOverlap),
  ];
  const html = section('trace-observables', 'Observables against time', plots);
  return html === '' ? null : html;
}

/** The propagation's error bound against time, and each trace's figures. */
function accuracySection(context: TraceContext): string | null {
  const { input, units, time, drawn } = context;
  const parts: string[] = [];
  if (drawn.length > 0)
    parts.push(
      renderLinePlot({
        id: 'trace-error-bound',
        title: 'error bound on the state ‖ψ(t) − ψ_exact(t)‖ against time',
        xLabel: time.label,
        yLabel: 'error bound',
        series: drawn.map((t, k) => ({
          name: traceName(t, input, units),
          x: time.of(t),
          y: t.errorBound,
          style: k,
        })),
      }),
    );
  const rows = input.traces.slice(0, MAX_TABLE_ROWS).map((t) => {
    const s = t.stats;
    const normDrift = t.norm.length > 0 ? Math.max(...t.norm.map((n) => Math.abs(n - 1))) : null;
    const lastBound = t.errorBound.length > 0 ? t.errorBound[t.errorBound.length - 1] : null;
    const cells = [
      input.keys.length > 0 ? `${t.point}: ${showParams(t.params, units)}` : 'trace',
      t.status + (t.error ? ` (${t.error})` : ''),
      plural(t.times.length, 'time'),
      s ? String(s.dimension) : '-',
      s ? String(s.krylov) : '-',
      s ? `${s.steps} / ${s.matvecs}` : '-',
      lastBound === null ? '-' : fmtSmall(lastBound),
      s ? fmtSmall(s.tolerance) : '-',
      normDrift === null ? '-' : fmtSmall(normDrift),
      s ? `${fmt(s.seconds, 3)} s` : '-',
    ];
    return `<tr>${cells.map((c) => `<td>${esc(c)}</td>`).join('')}</tr>`;
  });
  if (rows.length === 0) return null;
  const more =
    input.traces.length > rows.length
      ? `<p class="note">first ${rows.length} of ${input.traces.length} traces; \`rungchain trace RUN\` lists them all</p>`
      : '';
  parts.push(
    `<div class="table-wrap"><table class="trace-stats"><tr><th>trace</th><th>status</th><th>recorded</th><th>dimension</th><th>Krylov size</th><th>steps / products</th><th>error bound at the end</th><th>tolerance</th><th>largest |‖ψ‖ − 1|</th><th>time</th></tr>${rows.join('')}</table>${more}</div>`,
  );
  return section(
    'accuracy',
    'Error bounds',
    parts,
    'The bound is the running sum of each Krylov step’s a posteriori bound on the 2-norm error of the state; it stays below the tolerance at every recorded time. A probability taken from a state within ε of the exact one is within 2ε + ε² of the exact probability.',
  );
}

/** The report page of a trace run: the spec, the light cone, the observables and the error bounds. */
export function renderTraceReport(input: TraceReportInput): string {
  const units = unitsOf(input.energyUnitHz);
  const drawn = input.traces.filter((t) => t.times.length > 0);
  const context: TraceContext = { input, units, time: timeAxis(input.traces), drawn };
  const sections = [
    specSection(context),
    lightConeSection(context),
    observablesSection(context),
    accuracySection(context),
  ].filter((html): html is string => html !== null);
  const done = input.traces.filter((t) => t.status === 'done').length;
  const unitText = units.lab
    ? `Energies in h·kHz (the model's energy unit is h × ${fmt(input.energyUnitHz, 6)} Hz, from the spec's [units]).`
    : "Energies in ε, the model's energy unit; times in ħ/ε.";
  const notes = [...input.notes];
  const missing = input.traces.length - done;
  if (missing > 0)
    notes.push(
      `${missing} of ${input.traces.length} traces did not finish (failed or not yet run); their recorded times are drawn.`,
    );
  return reportDocument({
    title: input.title,
    about: [
      ...input.about,
      `${input.traces.length === 1 ? 'One trace' : `${input.traces.length} traces`}, ${done} finished. ${unitText}`,
    ],
    notes,
    sections,
  });
}
