// The HTML report of a scan: one self-contained file (inline SVG and CSS, no script, nothing
// fetched) with the observables against the scanned parameter, heat maps of two-parameter scans,
// the low spectrum, the transition indicators with their peaks, the finite-size fits and the
// per-site level populations of one chosen point. Each section has its function here; the plots,
// their colours and line styles are drawn by the modules beside this one.

import type { PointRecord } from '../../point/solvePoint.js';
import type { ScanParams } from '../../scan/plan.js';
import { fmt } from '../../format/tables.js';
import {
  OBSERVABLE_FIT_CHI2_LIMIT,
  OBSERVABLE_FIT_RESOLUTION,
  PEAK_FIT_CHI2_LIMIT,
  SIZE_AXES,
  availableObservables,
  observableValue,
  type AnalysisInput,
  type ScanAnalysis,
} from '../../analysis/transitions.js';
import type { Indicator } from '../../analysis/indicators.js';
import { sectorKey, sectorText } from '../../analysis/crossings.js';
import type { SectorLabel } from '../../symmetry/group.js';
import type { FitResult } from '../../analysis/fits.js';
import { HEAT_MAP_SCALARS, POINT_SCALARS, observableEntry, pointScalar } from '../../observables/catalogue.js';
import { esc, reportDocument, section } from './html.js';
import { MAX_SERIES, renderLinePlot } from './linePlot.js';
import { renderArrayPicture, type ArrayLayout } from './arrayPicture.js';
import { renderHeatMap } from './heatMap.js';
import { evenlyChosen } from './thinning.js';
import type { SpectrumResult } from '../../spectrum/spectrum.js';
import { statOf } from '../ensemble.js';
import { REALIZATION_KEY } from '../../spec/disorder.js';

/** Populations drawn for a chosen point: larger chains are cut to this many sites. */
export const MAX_POPULATION_SITES = 64;
/** Rows of any table (values, peaks, fits); the rest are in `summary --csv` or `--analysis --json`. */
export const MAX_TABLE_ROWS = 200;
/** Columns the table leaves out to stay narrow (they follow the ones it keeps). */
const DERIVED_NAMES = new Set(POINT_SCALARS.filter((s) => s.secondary).map((s) => s.name));

export interface ReportInput extends AnalysisInput {
  title: string;
  /** Lines under the title: where the run is, when it ran. */
  about: string[];
  analysis: ScanAnalysis;
  /** The model's energy unit in Hz when the run has laboratory units (same for every point), else null. */
  energyUnitHz: number | null;
  /** Index of the point whose populations are drawn (default: near the main indicator peak). */
  chosenPoint?: number;
  /** `exchange.range` when every solved point has the same one: nearest-neighbour exchange is not called dipolar. */
  exchangeRange?: 'nearest' | 'dipolar' | null;
  /** Keys of the axes drawn on a log scale (log-spaced scans; see `logScaleAxes`); none when absent. */
  logAxes?: string[];
  /** Where a point's sites are (from its spec), for the picture of the array; absent or null: no picture. */
  layoutOf?: (index: number) => ArrayLayout | null;
  /** Each point's spectrum, with a [spectrum] section (by point index); absent: none. */
  spectra?: Map<number, SpectrumResult>;
}

// ---------------------------------------------------------------------------------------------
// Units and labels

interface KeyInfo {
  symbol: string;
  name: string;
  kind: 'energy' | 'angle' | 'count' | 'lab' | 'other';
  /** Fixed unit of a laboratory quantity ([units] keys). */
  unit?: string;
}

const KEYS: Record<string, KeyInfo> = {
  'exchange.strength': { symbol: 'V', name: 'dipolar exchange', kind: 'energy' },
  'levels.tunnelling': { symbol: 'J', name: 'microwave tunnelling', kind: 'energy' },
  'levels.detuning': { symbol: 'Δ', name: 'detuning', kind: 'energy' },
  'levels.phase': { symbol: 'φ', name: 'Peierls phase', kind: 'angle' },
  'ising.strength': { symbol: 'W', name: 'diagonal dipole coupling', kind: 'energy' },
  'particles.hopping': { symbol: 't', name: 'real-space hopping', kind: 'energy' },
  'particles.onsite': { symbol: 'U', name: 'on-site energy', kind: 'energy' },
  'chain.sites': { symbol: 'L', name: 'sites', kind: 'count' },
  'levels.count': { symbol: 'N', name: 'levels', kind: 'count' },
  'particles.number': { symbol: 'n', name: 'particles', kind: 'count' },
  'units.dipole_debye': { symbol: 'd', name: 'dipole moment', kind: 'lab', unit: 'D' },
  'units.lattice_spacing_nm': { symbol: 'a', name: 'lattice spacing', kind: 'lab', unit: 'nm' },
  'units.dipole_angle_deg': { symbol: 'θ', name: 'dipole angle to the chain', kind: 'lab', unit: 'deg' },
  'units.rabi_khz': { symbol: 'Ω/2π', name: 'Rabi frequency', kind: 'lab', unit: 'kHz' },
  'units.detuning_khz': { symbol: 'Δ/h', name: 'detuning', kind: 'lab', unit: 'kHz' },
  'units.rotational_constant_ghz': { symbol: 'B/h', name: 'rotational constant', kind: 'lab', unit: 'GHz' },
  'units.energy_unit_hz': { symbol: 'ε/h', name: 'model energy unit', kind: 'lab', unit: 'Hz' },
};

function keyInfo(key: string, units?: Units): KeyInfo {
  const base = key.replace(/\[\d+\]/g, '');
  const known =
    base === 'exchange.strength' && units?.exchangeRange === 'nearest'
      ? { ...KEYS[base], name: 'exchange' }
      : KEYS[base];
  const index = /\[(\d+)\]/.exec(key);
  if (known) return index ? { ...known, symbol: `${known.symbol}${subscript(index[1])}` } : known;
  return { symbol: key, name: key, kind: 'other' };
}

function subscript(digits: string): string {
  return [...digits].map((d) => '₀₁₂₃₄₅₆₇₈₉'[Number(d)]).join('');
}

export interface Units {
  /** Label of an energy: "model units" or "h·kHz". */
  energy: string;
  /** Factor from model energy units to the shown unit. */
  energyScale: number;
  lab: boolean;
  /** Names `V` "exchange" rather than "dipolar exchange" when the run's exchange is nearest-neighbour. */
  exchangeRange: 'nearest' | 'dipolar' | null;
}

/** How energies are shown: in model units, or in h·kHz when the run has one laboratory energy unit. */
export function unitsOf(energyUnitHz: number | null, exchangeRange: Units['exchangeRange'] = null): Units {
  if (energyUnitHz === null) return { energy: 'ε', energyScale: 1, lab: false, exchangeRange };
  return { energy: 'h·kHz', energyScale: energyUnitHz / 1e3, lab: true, exchangeRange };
}

interface AxisUnit {
  label: string;
  unit: string;
  scale: number;
}

function parameterAxis(key: string, units: Units): AxisUnit {
  const info = keyInfo(key, units);
  const text = info.kind === 'other' ? key : `${info.symbol}, ${info.name}`;
  if (info.kind === 'energy') return { label: text, unit: units.energy, scale: units.energyScale };
  if (info.kind === 'angle') return { label: text, unit: 'rad', scale: 1 };
  if (info.kind === 'lab') return { label: text, unit: info.unit ?? '', scale: 1 };
  return { label: text, unit: '', scale: 1 };
}

function axisTitle(a: AxisUnit): string {
  return a.unit ? `${a.label} [${a.unit}]` : a.label;
}

/** A scanned value as text: lists (a field direction, per-direction spacings, positions) in brackets. */
export function paramValueText(value: unknown): string {
  return Array.isArray(value) ? `[${value.map(paramValueText).join(', ')}]` : String(value);
}

/** Scanned parameters as a reader writes them: symbols, values in the shown units. */
export function showParams(params: ScanParams, units: Units): string {
  const parts = Object.entries(params).map(([k, v]) => {
    const info = keyInfo(k, units);
    const scaled = typeof v === 'number' && info.kind === 'energy' ? v * units.energyScale : v;
    const value = typeof scaled === 'number' ? fmt(scaled, 5) : paramValueText(scaled);
    return `${info.kind === 'other' ? k : info.symbol} = ${value}${info.kind === 'energy' && units.lab ? ' h·kHz' : info.unit ? ` ${info.unit}` : ''}`;
  });
  return parts.length > 0 ? parts.join(', ') : 'all points';
}

interface ObservableInfo {
  title: string;
  /** For axis labels. */
  short: string;
  unit: (u: Units) => string;
  energy: boolean;
}

function observableInfo(name: string): ObservableInfo {
  const words = name.replace(/_/g, ' ');
  const { title, short, energy, unit } = pointScalar(name) ?? { title: words, short: words, energy: false, unit: '' };
  return { title, short, unit: energy ? (u: Units) => u.energy : () => unit, energy };
}

// ---------------------------------------------------------------------------------------------
// The report

interface Line {
  fixed: ScanParams;
  points: { x: number; record: PointRecord; index: number }[];
}

/** Points grouped into lines along the parameter, in parameter order. */
function linesAlong(input: ReportInput, parameter: string): Line[] {
  const others = input.zip ? [] : input.axes.map((a) => a.key).filter((k) => k !== parameter);
  const groups = new Map<string, Line>();
  for (const p of input.points) {
    if (!p.record) continue;
    const key = JSON.stringify(others.map((k) => p.params[k] ?? null));
    let line = groups.get(key);
    if (!line) {
      const fixed: ScanParams = {};
      for (const k of others) fixed[k] = p.params[k];
      groups.set(key, (line = { fixed, points: [] }));
    }
    line.points.push({ x: p.params[parameter] as number, record: p.record, index: p.index });
  }
  for (const line of groups.values()) line.points.sort((a, b) => a.x - b.x);
  return [...groups.values()];
}

/** A note under a table cut to MAX_TABLE_ROWS rows. */
function cutNote(shown: number, total: number): string {
  return total > shown
    ? `<p class="note">first ${shown} of ${total} rows; \`rungchain summary RUN --analysis --json\` has them all</p>`
    : '';
}

function fitTable(
  allRows: { label: string; fit: FitResult; warnings?: string; chi2PerDof?: number | null }[],
  variable: string,
  valueUnit: string,
): string {
  const rows = allRows.slice(0, MAX_TABLE_ROWS);
  const warned = rows.some((r) => r.warnings !== undefined);
  const head = `<tr><th>what</th><th>sizes ${esc(variable)}</th><th>extrapolated ${esc(variable)} → ∞${valueUnit ? ` [${esc(valueUnit)}]` : ''}</th><th>coefficients a₁…</th><th>residuals</th><th>χ²/dof</th>${warned ? '<th>warnings</th>' : ''}</tr>`;
  const body = rows
    .map(
      ({ label, fit, warnings, chi2PerDof }) =>
        `<tr><td>${esc(label)}</td><td>${fit.sizes.join(', ')}</td><td>${esc(fmt(fit.extrapolated, 7))} ± ${fit.extrapolated_error === null ? '?' : esc(fmt(fit.extrapolated_error, 2))}</td><td>${fit.coefficients
          .slice(1)
          .map((c, k) => `${esc(fmt(c, 5))}${fit.errors[k + 1] !== null ? ` ± ${esc(fmt(fit.errors[k + 1], 2))}` : ''}`)
          .join(
            '; ',
          )}</td><td>${fit.residuals.map((r) => esc(fmt(r, 2))).join(', ')}</td><td>${chi2PerDof !== undefined ? (chi2PerDof === null ? '-' : esc(fmt(chi2PerDof, 3))) : fit.dof > 0 ? esc(fmt(fit.chi2 / fit.dof, 3)) : '-'}</td>${warned ? `<td class="warn">${esc(warnings || '-')}</td>` : ''}</tr>`,
    )
    .join('');
  return `<table class="fits">${head}${body}</table>${cutNote(rows.length, allRows.length)}`;
}

const INDICATOR_SHORT: Record<string, string> = {
  gap: 'E₁ − E₀',
  fidelity: 'χ_F per site',
  curvature: '−∂²E₀/∂x² per site',
  width_slope: '∂(string width)/∂x',
};

const INDICATOR_UNITS: Record<string, (x: AxisUnit, u: Units) => string> = {
  gap: (_x, u) => u.energy,
  fidelity: (x) => (x.unit ? `1/(${x.unit})²` : ''),
  curvature: (x, u) => (x.unit ? `${u.energy}/(${x.unit})²` : u.energy),
  width_slope: (x) => (x.unit ? `levels²/(${x.unit})` : 'levels²'),
};

/** Which point's populations to draw: the requested one, else the done point nearest the main peak of the largest system. */
/** Every site has the same level populations (to within rounding): a translation or other symmetry makes them equivalent. */
function sitesAlike(record: PointRecord): boolean {
  const pops = record.observables.populations;
  return pops.every((row) => row.every((v, n) => Math.abs(v - pops[0][n]) <= SAME_POPULATION));
}

/** Populations closer than this are the same (well above the solver's rounding, well below any physics). */
const SAME_POPULATION = 1e-8;

/**
 * The point whose populations are drawn: as requested, else by the analysis; a point where every
 * site is alike shows nothing per site, so the nearest point where sites differ is taken instead,
 * or the reason says that no point has such sites.
 */
function choosePoint(input: ReportInput): { index: number; why: string } | null {
  const chosen = analysisChoice(input);
  if (chosen === null || input.chosenPoint !== undefined) return chosen;
  const done = input.points.filter((p) => p.record !== null);
  const at = done.find((p) => p.index === chosen.index)!;
  if (!sitesAlike(at.record!)) return chosen;
  const differing = done.filter((p) => !sitesAlike(p.record!));
  if (differing.length === 0)
    return {
      index: chosen.index,
      why: `${chosen.why}; every site has the same populations at every point (equivalent by symmetry)`,
    };
  differing.sort((a, b) => Math.abs(a.index - chosen.index) - Math.abs(b.index - chosen.index));
  return {
    index: differing[0].index,
    why: `as the point nearest to point ${chosen.index} (${chosen.why}) where sites differ; there every site was alike`,
  };
}

function analysisChoice(input: ReportInput): { index: number; why: string } | null {
  const done = input.points.filter((p) => p.record !== null);
  if (done.length === 0) return null;
  if (input.chosenPoint !== undefined)
    return done.some((p) => p.index === input.chosenPoint) ? { index: input.chosenPoint, why: 'as requested' } : null;
  const { analysis } = input;
  const param = analysis.parameter;
  if (param !== null) {
    // The line of the largest system, and its first indicator peak in order of preference.
    let best: { line: (typeof analysis.lines)[number]; size: number } | null = null;
    for (const line of analysis.lines) {
      const size = (line.sites ?? 0) * 1000 + (line.levels ?? 0);
      if (!best || size > best.size) best = { line, size };
    }
    const peak =
      best &&
      ['fidelity', 'gap', 'curvature', 'width_slope']
        .map((n) => best.line.indicators.find((i) => i.name === n)?.peak)
        .find((p) => p && !p.at_edge);
    if (best && peak) {
      const onLine = done.filter((p) =>
        Object.entries(best.line.fixed).every(([k, v]) => JSON.stringify(p.params[k]) === JSON.stringify(v)),
      );
      if (onLine.length > 0) {
        onLine.sort(
          (a, b) =>
            Math.abs((a.params[param] as number) - peak.position) -
            Math.abs((b.params[param] as number) - peak.position),
        );
        return { index: onLine[0].index, why: 'near the main transition indicator of the largest system' };
      }
    }
  }
  return { index: done[Math.floor(done.length / 2)].index, why: 'in the middle of the scan' };
}

/** What the sections of the report draw from: the input, its units and the lines along the parameter. */
interface ReportContext {
  input: ReportInput;
  analysis: ScanAnalysis;
  units: Units;
  /** The axis the plots run along; null when no numeric axis is scanned. */
  parameter: string | null;
  xAxis: AxisUnit | null;
  /** The solved points. */
  done: ReportInput['points'];
  lines: Line[];
  /** The observables the solved points have, in the order they are drawn. */
  names: string[];
  lineName: (fixed: ScanParams) => string;
  scaleX: (x: number) => number;
  /** The parameter is drawn on a log axis. */
  logX: boolean;
}

function reportContext(input: ReportInput): ReportContext {
  const units = unitsOf(input.energyUnitHz, input.exchangeRange ?? null);
  const { analysis } = input;
  const parameter = analysis.parameter;
  const done = input.points.filter((p) => p.record !== null);
  const records = done.map((p) => p.record!);
  const xAxis = parameter ? parameterAxis(parameter, units) : null;
  const lines = parameter ? linesAlong(input, parameter) : [];
  const lineName = (fixed: ScanParams) => showParams(fixed, units);
  const scaleX = (x: number) => x * (xAxis?.scale ?? 1);
  const names = availableObservables(records).filter((n) => n !== 'E0');
  const logX = parameter !== null && (input.logAxes ?? []).includes(parameter);
  return { input, analysis, units, parameter, xAxis, done, lines, names, lineName, scaleX, logX };
}

// Each section below returns its HTML, or null when the scan has nothing for it.

/** Each observable against the parameter, a line per value of the other axes. */
function observablesSection(context: ReportContext): string | null {
  const { input, units, parameter, xAxis, lines, names, lineName, scaleX, logX } = context;
  if (parameter && xAxis) {
    const plots = names.map((name) => {
      const info = observableInfo(name);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      return renderLinePlot({
        logX,
        id: `obs-${name.replace(/[^A-Za-z0-9]+/g, '-')}`,
        title: `${info.title} against ${xAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel: unit ? `${info.short} [${unit}]` : info.short,
        series: lines.map((line) => ({
          name: lineName(line.fixed),
          x: line.points.map((p) => scaleX(p.x)),
          y: line.points.map((p) => (observableValue(p.record, name) ?? NaN) * scale),
        })),
      });
    });
    return section(
      'observables',
      'Observables',
      plots,
      `One line per value of the other scanned ${input.axes.length > 2 ? 'axes' : 'axis'}.${logX ? ` ${xAxis.label} is log-spaced and drawn on a log axis here and in every plot against it.` : ''}`,
    );
  }
  return null;
}

/** Heat maps of two-parameter scans. */
function heatMapsSection(context: ReportContext): string | null {
  const { input, units, parameter, xAxis, done, names, scaleX, logX } = context;
  const numericAxes = input.axes.filter((a) => a.values.every((v) => typeof v === 'number'));
  if (parameter && xAxis && !input.zip && numericAxes.length >= 2) {
    const other = [...numericAxes].reverse().find((a) => a.key !== parameter)!;
    const rest = input.axes.filter((a) => a.key !== parameter && a.key !== other.key);
    const fixed: ScanParams = {};
    for (const a of rest) fixed[a.key] = a.values[0];
    const xValues = [...new Set(input.axes.find((a) => a.key === parameter)!.values as number[])].sort((a, b) => a - b);
    const yValues = [...new Set(other.values as number[])].sort((a, b) => a - b);
    const yAxis = parameterAxis(other.key, units);
    const cell = new Map<string, PointRecord>();
    for (const p of done) {
      if (rest.some((a) => JSON.stringify(p.params[a.key]) !== JSON.stringify(fixed[a.key]))) continue;
      cell.set(`${String(p.params[parameter])}|${String(p.params[other.key])}`, p.record!);
    }
    const heatNames = HEAT_MAP_SCALARS.filter((n) => names.includes(n));
    const maps = heatNames.map((name) => {
      const info = observableInfo(name);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      return renderHeatMap({
        id: `heat-${name.replace(/[^A-Za-z0-9]+/g, '-')}`,
        title: `${info.title} over ${xAxis.label} and ${yAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel: axisTitle(yAxis),
        xValues: xValues.map(scaleX),
        yValues: yValues.map((v) => v * yAxis.scale),
        z: yValues.map((yv) =>
          xValues.map((xv) => {
            const r = cell.get(`${xv}|${yv}`);
            return r ? (observableValue(r, name) ?? NaN) * scale : NaN;
          }),
        ),
        zLabel: unit ? `${info.short} [${unit}]` : info.short,
        logX,
        logY: (input.logAxes ?? []).includes(other.key),
        notes: rest.length > 0 ? [`other axes held at ${showParams(fixed, units)}`] : [],
      });
    });
    return section('heatmaps', 'Two-parameter maps', maps);
  }
  return null;
}

/** Low spectrum flowing with the parameter. */
function spectrumSection(context: ReportContext): string | null {
  const { units, parameter, xAxis, lines, lineName, scaleX, logX } = context;
  if (parameter && xAxis) {
    const chosen = evenlyChosen(lines, 4);
    const plots = chosen.map((line, k) => {
      const states = Math.max(...line.points.map((p) => p.record.energies.length));
      return renderLinePlot({
        logX,
        id: `spectrum-${k}`,
        title: `low spectrum E_n − E₀ against ${xAxis.label}${lines.length > 1 ? ` (${lineName(line.fixed)})` : ''}`,
        xLabel: axisTitle(xAxis),
        yLabel: `E_n − E₀ [${units.energy}]`,
        // States are counted by n: on a ring "k" would read as a momentum.
        series: Array.from({ length: states }, (_, s) => ({
          name: `state ${s}`,
          x: line.points.map((p) => scaleX(p.x)),
          y: line.points.map((p) => ((p.record.energies[s] ?? NaN) - p.record.energies[0]) * units.energyScale),
        })),
        notes: lines.length > chosen.length && k === 0 ? [`${chosen.length} of ${lines.length} lines shown`] : [],
      });
    });
    return section(
      'spectrum',
      'Low spectrum',
      plots,
      'Excitation energies of the lowest states; level crossings and a closing gap show where the ground state changes character.',
    );
  }
  return null;
}

/** The [spectrum] of each point against the parameter: a heat map per line, frequency up, intensity as colour. */
function responseSection(context: ReportContext): string | null {
  const { input, parameter, xAxis, lines, lineName, scaleX, logX } = context;
  const spectra = input.spectra;
  if (!parameter || !xAxis || !spectra || spectra.size === 0) return null;
  const withSpectra = lines
    .map((line) => ({ ...line, points: line.points.filter((p) => spectra.has(p.index)) }))
    .filter((line) => line.points.length > 0);
  if (withSpectra.length === 0) return null;
  const chosen = evenlyChosen(withSpectra, 4);
  const maps = chosen.map((line, k) => {
    const first = spectra.get(line.points[0].index)!;
    const grid = first.frequencies;
    const unit = first.frequency_unit === 'khz' ? 'kHz' : 'model units';
    // A point whose frequency grid differs (a scanned frequencies key) leaves its column empty.
    const same = (s: SpectrumResult) =>
      s.frequencies.length === grid.length &&
      s.frequencies.every((f, i) => Math.abs(f - grid[i]) <= 1e-12 * Math.max(1, Math.abs(f)));
    return renderHeatMap({
      id: `response-${k}`,
      title: `spectrum A(ω) against ${xAxis.label}${withSpectra.length > 1 ? ` (${lineName(line.fixed)})` : ''}`,
      xLabel: axisTitle(xAxis),
      yLabel: `ω [${unit}]`,
      xValues: line.points.map((p) => scaleX(p.x)),
      yValues: grid,
      z: grid.map((_, row) =>
        line.points.map((p) => {
          const s = spectra.get(p.index)!;
          return same(s) ? s.intensity[row] : NaN;
        }),
      ),
      zLabel: `A(ω) [per ${first.frequency_unit === 'khz' ? 'kHz' : 'unit'}]`,
      logX,
      notes:
        withSpectra.length > chosen.length && k === 0 ? [`${chosen.length} of ${withSpectra.length} lines shown`] : [],
    });
  });
  const probe = spectra.values().next().value!.probe;
  const what =
    probe.kind === 'drive'
      ? `a drive on link ${probe.link}`
      : probe.kind === 'level'
        ? `the population of level ${probe.level}`
        : 'the synthetic coordinate';
  return section(
    'response',
    'Spectrum',
    maps,
    `Linear response of the ground state to ${what} (rungchain spectrum): line positions E_n − E₀ move with the parameter; bound states show as lines split off the continuum.`,
  );
}

/** Lowest level of each symmetry sector: a crossing of the ground state shows as two sectors' lines meeting. */
function sectorLevelsSection(context: ReportContext): string | null {
  const { analysis, units, parameter, xAxis, lines, lineName, scaleX, logX } = context;
  if (parameter && xAxis) {
    const chosen = evenlyChosen(
      lines.filter((l) => l.points.some((p) => p.record.solver.sector_runs)),
      4,
    );
    const plots = chosen.map((line, k) => {
      const levels = new Map<string, { label: SectorLabel; y: number[]; above: number }>();
      line.points.forEach((p, i) => {
        for (const run of p.record.solver.sector_runs ?? []) {
          const key = sectorKey(run.label);
          let level = levels.get(key);
          if (!level)
            levels.set(
              key,
              (level = { label: run.label, y: new Array<number>(line.points.length).fill(NaN), above: Infinity }),
            );
          level.y[i] = run.lowest;
          level.above = Math.min(level.above, run.lowest - p.record.energies[0]);
        }
      });
      // The sectors that come nearest the ground level (the ground sectors first), as many as a plot shows.
      const shown = [...levels.values()].sort((a, b) => a.above - b.above).slice(0, MAX_SERIES);
      const analysed = analysis.lines.find((l) => JSON.stringify(l.fixed) === JSON.stringify(line.fixed));
      const e0At = (x: number) => {
        const i = line.points.findIndex((p) => p.x >= x);
        if (i <= 0) return line.points[Math.max(i, 0)].record.energies[0];
        const a = line.points[i - 1];
        const b = line.points[i];
        const from = analysed?.crossings.find((c) => c.position === x)?.from;
        const level = from ? levels.get(sectorKey(from)) : undefined;
        // The crossing lies on the line of the sector it leaves.
        const ya = level ? level.y[i - 1] : a.record.energies[0];
        const yb = level ? level.y[i] : b.record.energies[0];
        return ya + ((x - a.x) / (b.x - a.x)) * (yb - ya);
      };
      return renderLinePlot({
        logX,
        id: `sectors-${k}`,
        title: `lowest level of each sector against ${xAxis.label}${lines.length > 1 ? ` (${lineName(line.fixed)})` : ''}`,
        xLabel: axisTitle(xAxis),
        yLabel: `E [${units.energy}]`,
        series: shown.map((level) => ({
          name: sectorText(level.label),
          x: line.points.map((p) => scaleX(p.x)),
          y: level.y.map((v) => v * units.energyScale),
        })),
        marks: (analysed?.crossings ?? []).map((c) => ({
          x: scaleX(c.position),
          y: e0At(c.position) * units.energyScale,
          xErr: 0,
          label: `crossing at ${fmt(scaleX(c.position), 7)}: ${sectorText(c.from)} → ${sectorText(c.to)}${c.interpolated ? '' : ' (midpoint: no sector energies)'}`,
          style: 0,
          hollow: false,
        })),
        notes:
          levels.size > shown.length
            ? [`the ${shown.length} of ${levels.size} sectors that come nearest the ground level`]
            : [],
      });
    });
    return section(
      'sectors',
      'Sector levels',
      plots,
      'The lowest energy of each symmetry sector (q: level charge, m: momentum 2πm/L, P: reflection, F: level flip); where the ground state changes sector the lines cross, and diamonds mark the crossings, placed where the two lines meet between grid points.',
    );
  }
  return null;
}

/** The transition indicators against the parameter with each line's extremum marked, and a table of the extrema. */
function indicatorsSection(context: ReportContext): string | null {
  const { analysis, units, parameter, xAxis, lineName, scaleX, logX } = context;
  if (parameter && xAxis && analysis.lines.length > 0) {
    const kinds: Indicator['name'][] = ['gap', 'fidelity', 'curvature', 'width_slope'];
    const plots = kinds.map((name) => {
      const withIt = analysis.lines.filter((l) => l.indicators.some((i) => i.name === name));
      if (withIt.length === 0) return '';
      const first = withIt[0].indicators.find((i) => i.name === name)!;
      const unit = INDICATOR_UNITS[name](xAxis, units);
      const yScale =
        name === 'gap'
          ? units.energyScale
          : name === 'fidelity'
            ? 1 / xAxis.scale ** 2
            : name === 'curvature'
              ? units.energyScale / xAxis.scale ** 2
              : 1 / xAxis.scale;
      const shownLines = evenlyChosen(withIt, MAX_SERIES);
      const series = shownLines.map((l, k) => {
        const ind = l.indicators.find((i) => i.name === name)!;
        return { name: lineName(l.fixed), x: ind.x.map(scaleX), y: ind.y.map((v) => v * yScale), style: k };
      });
      const marks = shownLines.flatMap((l, k) => {
        const ind = l.indicators.find((i) => i.name === name)!;
        const peak = ind.peak;
        if (ind.kind === 'crossing' && ind.crossing) {
          const c = ind.crossing;
          // On the curve's sample nearest the crossing (a curve across a crossing has no value at it).
          const nearest = ind.x.reduce(
            (best, v, i) => (Math.abs(v - c.position) < Math.abs(ind.x[best] - c.position) ? i : best),
            0,
          );
          return [
            {
              x: scaleX(c.position),
              y: (ind.y[nearest] ?? 0) * yScale,
              xErr: 0,
              label: `${lineName(l.fixed)}: level crossing at ${fmt(scaleX(c.position), 7)} (${sectorText(c.from)} → ${sectorText(c.to)}), not a smooth ${first.extremum === 'min' ? 'minimum' : 'peak'}`,
              style: k,
              hollow: false,
            },
          ];
        }
        if (!peak) return [];
        return [
          {
            x: scaleX(peak.position),
            y: peak.value * yScale,
            xErr: peak.uncertainty * xAxis.scale,
            label: `${lineName(l.fixed)}: ${first.extremum === 'min' ? 'minimum' : 'peak'} at ${fmt(scaleX(peak.position), 5)} ± ${fmt(peak.uncertainty * xAxis.scale, 2)}${peak.at_edge ? ' (at the end of the scan)' : peak.refined ? '' : ' (the grid point: no parabola fits there)'}`,
            style: k,
            hollow: peak.at_edge,
          },
        ];
      });
      return renderLinePlot({
        logX,
        id: `indicator-${name}`,
        title: `${first.label} against ${xAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel:
          (name === 'gap' && first.uses === 'gap_above_ground' ? 'E(next level) − E₀' : INDICATOR_SHORT[name]) +
          (unit ? ` [${unit}]` : ''),
        series,
        marks,
        notes: marks.some((m) => m.hollow)
          ? ['hollow diamonds: the extremum is at the end of the scan, the peak may lie beyond it']
          : [],
      });
    });
    const table = `<table class="peaks"><tr><th>line</th>${kinds.map((k) => `<th>${esc(k === 'gap' ? 'gap minimum' : k === 'fidelity' ? 'fidelity peak' : k === 'curvature' ? '−d²E₀/dx² peak' : 'steepest string width')}</th>`).join('')}</tr>${analysis.lines
      .slice(0, MAX_TABLE_ROWS)
      .map(
        (l) =>
          `<tr><td>${esc(lineName(l.fixed))}</td>${kinds
            .map((k) => {
              const ind = l.indicators.find((i) => i.name === k);
              const p = ind?.peak;
              if (ind?.kind === 'crossing' && ind.crossing)
                return `<td>crossing at ${esc(fmt(scaleX(ind.crossing.position), 7))} (${esc(sectorText(ind.crossing.from))} → ${esc(sectorText(ind.crossing.to))})</td>`;
              return `<td>${p ? `${esc(fmt(scaleX(p.position), 5))} ± ${esc(fmt(p.uncertainty * xAxis.scale, 2))}${p.at_edge ? ' (edge)' : p.refined ? '' : ' (grid)'}` : '-'}</td>`;
            })
            .join('')}</tr>`,
      )
      .join('')}</table>${cutNote(Math.min(MAX_TABLE_ROWS, analysis.lines.length), analysis.lines.length)}`;
    return section(
      'indicators',
      'Transition indicators',
      [...plots, `<div class="table-wrap">${table}</div>`],
      `Diamonds mark each line's extremum (parabola through the extremal grid point and its neighbours), with a bar of ± half the grid spacing. Fidelity susceptibility per site χ_F = −2 ln F/(δ² L) from overlaps F of neighbouring ground states, except across a level crossing, where the extremum is the crossing itself (marked and named in the table). The gap is the distance from the (possibly degenerate) ground level to the next level.`,
    );
  }
  return null;
}

/** Peak positions against 1/size^p with their fits: a plot and a table per size axis. */
function peakFitFigures(context: ReportContext, power: number, powerText: string): string[] {
  const { analysis, xAxis, lineName, scaleX } = context;
  const fitParts: string[] = [];
  if (analysis.peak_fits.length > 0 && xAxis) {
    const bySize = new Map<string, typeof analysis.peak_fits>();
    for (const f of analysis.peak_fits) bySize.set(f.size, [...(bySize.get(f.size) ?? []), f]);
    for (const [size, fits] of bySize) {
      const v = SIZE_AXES[size];
      const shown = fits.slice(0, MAX_SERIES);
      fitParts.push(
        renderLinePlot({
          id: `fit-peaks-${v}`,
          title: `peak positions against 1/${v}${powerText}, with the fits`,
          xLabel: `1/${v}${powerText}`,
          yLabel: axisTitle(xAxis),
          includeZeroX: true,
          series: shown.flatMap((f, k) => {
            const xs = f.fit.sizes.map((s) => 1 / s ** power);
            const fitX = Array.from({ length: 21 }, (_, i) => (Math.max(...xs) * i) / 20);
            const label = `${f.label}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`;
            return [
              {
                name: label,
                x: xs,
                y: f.fit.values.map(scaleX),
                yErr: (f.fit.sigmas ?? []).map((s) => s * xAxis.scale),
                pointsOnly: true,
                style: k,
              },
              {
                name: `${label}: fit`,
                x: fitX,
                y: fitX.map((x) => scaleX(f.fit.coefficients.reduce((sum, a, i) => sum + a * x ** i, 0))),
                style: k,
              },
            ];
          }),
          marks: shown.map((f, k) => ({
            x: 0,
            y: scaleX(f.fit.extrapolated),
            yErr: f.fit.extrapolated_error !== null ? f.fit.extrapolated_error * xAxis.scale : undefined,
            label: `${f.label}: extrapolated ${fmt(scaleX(f.fit.extrapolated), 6)} ± ${f.fit.extrapolated_error === null ? '?' : fmt(f.fit.extrapolated_error * xAxis.scale, 2)}`,
            style: k,
          })),
          notes:
            fits.length > shown.length ? [`${shown.length} of ${fits.length} fits drawn; all are in the table`] : [],
        }),
      );
      fitParts.push(
        `<div class="table-wrap">${fitTable(
          fits.map((f) => ({
            label: `${f.label}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`,
            fit: f.fit,
            warnings: f.flags
              .map((w) =>
                w === 'outside_scan' ? 'extrapolated outside the scanned range' : `χ²/dof above ${PEAK_FIT_CHI2_LIMIT}`,
              )
              .join(', '),
          })),
          v,
          xAxis.unit,
        )}</div>`,
      );
    }
  }
  return fitParts;
}

/** Each fitted observable against 1/size^p (or its extrapolation against the parameter), with a table. */
function observableFitFigures(context: ReportContext, power: number, powerText: string): string[] {
  const { analysis, units, parameter, xAxis, lineName, scaleX, logX } = context;
  const fitParts: string[] = [];
  if (analysis.observable_fits.length > 0) {
    const groups = new Map<string, typeof analysis.observable_fits>();
    for (const f of analysis.observable_fits)
      groups.set(`${f.observable}|${f.size}`, [...(groups.get(`${f.observable}|${f.size}`) ?? []), f]);
    for (const fits of groups.values()) {
      const { observable, size } = fits[0];
      const v = SIZE_AXES[size];
      const info = observableInfo(observable);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      const yLabel = unit ? `${info.short} [${unit}]` : info.short;
      // With the parameter among the fixed axes: the extrapolated value against it, as a line per other axis.
      if (parameter && xAxis && fits.every((f) => typeof f.fixed[parameter] === 'number')) {
        const others = new Map<string, typeof fits>();
        for (const f of fits) {
          const rest = { ...f.fixed };
          delete rest[parameter];
          const key = JSON.stringify(rest);
          others.set(key, [...(others.get(key) ?? []), f]);
        }
        fitParts.push(
          renderLinePlot({
            logX,
            id: `fit-${observable.replace(/[^A-Za-z0-9]+/g, '-')}-${v}`,
            title: `${info.title} extrapolated to ${v} → ∞ (fit against 1/${v}${powerText}), against ${xAxis.label}`,
            xLabel: axisTitle(xAxis),
            yLabel,
            series: [...others.values()].map((group, k) => {
              const sorted = [...group].sort((a, b) => (a.fixed[parameter] as number) - (b.fixed[parameter] as number));
              const rest = { ...sorted[0].fixed };
              delete rest[parameter];
              return {
                name: Object.keys(rest).length ? lineName(rest) : `extrapolated ${v} → ∞`,
                x: sorted.map((f) => scaleX(f.fixed[parameter] as number)),
                y: sorted.map((f) => f.fit.extrapolated * scale),
                yErr: sorted.map((f) => (f.fit.extrapolated_error === null ? null : f.fit.extrapolated_error * scale)),
                style: k,
              };
            }),
          }),
        );
      } else {
        fitParts.push(
          renderLinePlot({
            id: `fit-${observable.replace(/[^A-Za-z0-9]+/g, '-')}-${v}`,
            title: `${info.title} against 1/${v}${powerText}, with the fits`,
            xLabel: `1/${v}${powerText}`,
            yLabel,
            includeZeroX: true,
            series: fits.slice(0, MAX_SERIES).flatMap((f, k) => {
              const xs = f.fit.sizes.map((s) => 1 / s ** power);
              const fitX = Array.from({ length: 21 }, (_, i) => (Math.max(...xs) * i) / 20);
              const name = Object.keys(f.fixed).length ? lineName(f.fixed) : observable;
              return [
                { name, x: xs, y: f.fit.values.map((y) => y * scale), pointsOnly: true, style: k },
                {
                  name: `${name}: fit`,
                  x: fitX,
                  y: fitX.map((x) => f.fit.coefficients.reduce((sum, a, i) => sum + a * x ** i, 0) * scale),
                  style: k,
                },
              ];
            }),
          }),
        );
      }
      fitParts.push(
        `<div class="table-wrap">${fitTable(
          fits.map((f) => ({
            label: `${observable}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`,
            fit: f.fit,
            chi2PerDof: f.scaled_chi2_dof,
            warnings: f.flags
              .map((w) =>
                w === 'outside_range'
                  ? 'extrapolated outside the values it can take'
                  : `χ²/dof above ${OBSERVABLE_FIT_CHI2_LIMIT}`,
              )
              .join(', '),
          })),
          v,
          unit,
        )}</div>`,
      );
    }
  }
  return fitParts;
}

/** Finite-size trends: the fits of peak positions and observables against 1/size^p. */
function fitsSection(context: ReportContext): string | null {
  const { analysis } = context;
  const power = analysis.power;
  const powerText = power === 1 ? '' : `^${fmt(power, 3)}`;
  const fitParts = [...peakFitFigures(context, power, powerText), ...observableFitFigures(context, power, powerText)];
  if (fitParts.length > 0) {
    return section(
      'fits',
      'Finite-size trends',
      fitParts,
      `Weighted least squares y = a₀ + a₁ x${analysis.terms > 2 ? ' + a₂ x² …' : ''} with x = 1/size${powerText}; a₀ is the value extrapolated to infinite size. Peak positions are weighted by their grid uncertainty; observables equally, with errors from the residual scatter. A fit is flagged when χ²/dof exceeds ${PEAK_FIT_CHI2_LIMIT} (for observables, exact to the solver's precision, with σ = ${OBSERVABLE_FIT_RESOLUTION * 100}% of the values' spread over the sizes) or when it extrapolates outside the scanned range (peaks) or the values the observable can take.`,
    );
  }
  return null;
}

/** Without a numeric parameter (e.g. only particle kinds scanned) there is nothing to draw against: a table. */
function valuesSection(context: ReportContext): string | null {
  const { input, units, parameter, done, names } = context;
  if (!parameter && done.length > 0) {
    const shown = done.slice(0, MAX_TABLE_ROWS);
    const columns = names.filter((n) => !DERIVED_NAMES.has(n));
    const head = `<tr><th>point</th>${input.axes.map((a) => `<th>${esc(a.key)}</th>`).join('')}${columns
      .map((n) => {
        const info = observableInfo(n);
        const unit = info.unit(units);
        return `<th>${esc(info.short)}${unit ? ` [${esc(unit)}]` : ''}</th>`;
      })
      .join('')}</tr>`;
    const rows = shown
      .map((p) => {
        const cells = columns.map((n) => {
          const v = observableValue(p.record!, n);
          return `<td>${v === undefined ? '-' : esc(fmt(v * (observableInfo(n).energy ? units.energyScale : 1), 7))}</td>`;
        });
        return `<tr><td>${p.index}</td>${input.axes.map((a) => `<td>${esc(paramValueText(p.params[a.key]))}</td>`).join('')}${cells.join('')}</tr>`;
      })
      .join('');
    const more =
      done.length > shown.length
        ? `<p class="note">first ${shown.length} of ${done.length} points; \`rungchain summary RUN --csv\` has them all</p>`
        : '';
    return section('values', 'Values per point', [
      `<div class="table-wrap"><table class="values">${head}${rows}</table>${more}</div>`,
    ]);
  }
  return null;
}

/** The per-site level populations of one point. */
function populationsSection(context: ReportContext): string | null {
  const { input, units } = context;
  const choice = choosePoint(input);
  if (choice !== null) {
    const chosen = choice.index;
    const point = input.points.find((p) => p.index === chosen)!;
    const pops = point.record!.observables.populations;
    const sites = Math.min(pops.length, MAX_POPULATION_SITES);
    const levels = pops[0]?.length ?? 0;
    const map = renderHeatMap({
      id: 'populations',
      title: `level populations per site at point ${chosen} (${showParams(point.params, units)})`,
      xLabel: 'level n',
      yLabel: 'site i',
      xValues: Array.from({ length: levels }, (_, n) => n),
      yValues: Array.from({ length: sites }, (_, i) => i),
      z: pops.slice(0, sites),
      zLabel: point.record!.basis.kind === 'pinned' ? 'probability' : 'mean occupation',
      // Probabilities on a fixed scale; occupations from zero.
      range: point.record!.basis.kind === 'pinned' ? [0, 1] : [0, Math.max(1e-12, ...pops.flat())],
      annotate: sites * levels <= 96,
      notes: pops.length > sites ? [`first ${sites} of ${pops.length} sites`] : [],
    });
    return section(
      'populations',
      'Level populations of one point',
      [map, arrayFigure(input, point, units)],
      `Chosen ${choice.why}; \`rungchain report RUN --point INDEX\` picks another.`,
    );
  }
  return null;
}

/**
 * The picture of the array at the chosen point, sites coloured by their mean level; '' for plain
 * chains (their heat maps already lay the sites out in order) and when the layout is unknown.
 */
function arrayFigure(input: ReportInput, point: ReportInput['points'][number], units: Units): string {
  const layout = input.layoutOf?.(point.index) ?? null;
  const values = point.record!.observables.level_mean;
  if (layout === null || layout.isChain || !Array.isArray(values) || values.length !== layout.positions.length)
    return '';
  const info = observableEntry('level_mean')!;
  const levels = point.record!.basis.levels;
  return renderArrayPicture({
    id: 'array-picture',
    title: `the array at point ${point.index} (${showParams(point.params, units)}): sites coloured by ${info.title}`,
    layout,
    values,
    valueLabel: `${info.short} [${info.unit}]`,
    // The full ladder, so colours compare across points and scans.
    range: [0, Math.max(1, levels - 1)],
  });
}

/** The connected level correlations and pair separations of the point whose populations are drawn. */
function correlationsSection(context: ReportContext): string | null {
  const { input, units } = context;
  const choice = choosePoint(input);
  if (choice === null) return null;
  const point = input.points.find((p) => p.index === choice.index)!;
  const observables = point.record!.observables;
  const where = `at point ${choice.index} (${showParams(point.params, units)})`;
  const siteMap = (id: string, title: string, values: number[][], zLabel: string, range: [number, number]) => {
    const sites = Math.min(values.length, MAX_POPULATION_SITES);
    const axis = Array.from({ length: sites }, (_, i) => i);
    return renderHeatMap({
      id,
      title: `${title} ${where}`,
      xLabel: 'site j',
      yLabel: 'site i',
      xValues: axis,
      yValues: axis,
      z: values.slice(0, sites).map((row) => row.slice(0, sites)),
      zLabel,
      range,
      annotate: sites <= 10,
      notes: values.length > sites ? [`first ${sites} of ${values.length} sites`] : [],
    });
  };
  const maps: string[] = [];
  // Records written before level_correlation existed lack it.
  const correlation = observables.level_correlation;
  if (Array.isArray(correlation) && correlation.length > 0) {
    // Symmetric about zero, so anticorrelation and correlation of equal size read alike.
    const largest = Math.max(1e-12, ...correlation.flat().map(Math.abs));
    const info = observableEntry('level_correlation')!;
    maps.push(
      siteMap('level-correlation', info.title, correlation, `${info.short} [${info.unit}]`, [-largest, largest]),
    );
  }
  const separation = observables.pair_separation;
  if (Array.isArray(separation) && separation.length > 0) {
    const info = observableEntry('pair_separation')!;
    const largest = Math.max(1e-12, ...separation.flat());
    maps.push(siteMap('pair-separation', info.title, separation, `${info.short} [${info.unit}]`, [0, largest]));
  }
  if (maps.length === 0) return null;
  return section(
    'correlations',
    'Level correlations of one point',
    maps,
    `The point of the populations above, chosen ${choice.why}.`,
  );
}

/** The page around the sections: title, what was scanned, notes, a table of contents. */
function reportPage(context: ReportContext, sections: string[]): string {
  const { input, analysis, units, done } = context;
  const failed = input.points.length - done.length;
  const axesText = input.axes
    .map(
      (a) =>
        `${keyInfo(a.key).kind === 'other' ? a.key : `${keyInfo(a.key).symbol} (${a.key})`}: ${a.values.length} value${a.values.length === 1 ? '' : 's'}`,
    )
    .join(input.zip ? ' with ' : ' × ');
  const unitText = units.lab
    ? `Energies in h·kHz (the model's energy unit is h × ${fmt(input.energyUnitHz, 6)} Hz, from the run's [units]).`
    : "Energies in ε, the model's energy unit: the unit of the spec's couplings (usually the tunnelling J).";
  const notes = [...analysis.notes];
  if (failed > 0)
    notes.push(`${failed} of ${input.points.length} points have no result (failed or not yet run); they are left out.`);
  return reportDocument({
    title: input.title,
    about: [...input.about, `Scan: ${axesText}; ${done.length} of ${input.points.length} points solved. ${unitText}`],
    notes,
    sections,
  });
}

// ---------------------------------------------------------------------------------------------
// Disorder ensembles (issue 20)

/** Mean and standard error (sample standard deviation / sqrt(n)) of the values, null where none. */
function meanAndError(values: number[]): { mean: number; error: number | null } | null {
  const finite = values.filter((v) => Number.isFinite(v));
  if (finite.length === 0) return null;
  const stat = statOf(finite);
  return { mean: stat.mean as number, error: stat.stderr };
}

/** Points x to the values of the realizations there, per group of the axes other than the realization. */
function byRealizationGroups<T extends { fixed: ScanParams }>(items: T[]): { fixed: ScanParams; items: T[] }[] {
  const groups = new Map<string, { fixed: ScanParams; items: T[] }>();
  for (const item of items) {
    const fixed: ScanParams = { ...item.fixed };
    delete fixed[REALIZATION_KEY];
    const key = JSON.stringify(fixed);
    const group = groups.get(key) ?? { fixed, items: [] };
    group.items.push(item);
    groups.set(key, group);
  }
  return [...groups.values()];
}

/** Mean ± standard error at each x over curves given as (x, y) lists. */
function meanCurve(curves: { x: number[]; y: number[] }[]): { x: number[]; y: number[]; yErr: (number | null)[] } {
  const at = new Map<number, number[]>();
  for (const c of curves) c.x.forEach((x, k) => at.set(x, [...(at.get(x) ?? []), c.y[k]]));
  const xs = [...at.keys()].sort((a, b) => a - b);
  const stats = xs.map((x) => meanAndError(at.get(x)!));
  return {
    x: xs,
    y: stats.map((s) => s?.mean ?? NaN),
    yErr: stats.map((s) => s?.error ?? null),
  };
}

/**
 * A disorder ensemble: the energy and observables as mean ± standard error over the realizations,
 * and each transition indicator as the mean over realizations of each realization's own indicator
 * curve (not the indicator of the mean curves), with the mean ± standard error of its peak position.
 */
function ensembleSection(context: ReportContext): string | null {
  const { input, analysis, units, parameter, xAxis, lines, names, lineName, scaleX, logX } = context;
  if (!parameter || !xAxis || parameter === REALIZATION_KEY || !input.axes.some((a) => a.key === REALIZATION_KEY))
    return null;
  const groups = byRealizationGroups(lines);
  const named = (fixed: ScanParams) => (Object.keys(fixed).length > 0 ? lineName(fixed) : 'mean');
  const observablePlots = ['E0', ...names].map((name) => {
    const info = observableInfo(name);
    const scale = info.energy ? units.energyScale : 1;
    const unit = info.unit(units);
    return renderLinePlot({
      logX,
      id: `ensemble-${name.replace(/[^A-Za-z0-9]+/g, '-')}`,
      title: `${info.title} against ${xAxis.label}: mean ± standard error over the realizations`,
      xLabel: axisTitle(xAxis),
      yLabel: unit ? `${info.short} [${unit}]` : info.short,
      series: evenlyChosen(groups, MAX_SERIES).map((g, k) => {
        const curve = meanCurve(
          g.items.map((line) => ({
            x: line.points.map((p) => p.x),
            y: line.points.map((p) => observableValue(p.record, name) ?? NaN),
          })),
        );
        return {
          name: named(g.fixed),
          x: curve.x.map(scaleX),
          y: curve.y.map((v) => v * scale),
          yErr: curve.yErr.map((e) => (e === null ? null : e * scale)),
          style: k,
        };
      }),
    });
  });
  const kinds: Indicator['name'][] = ['gap', 'fidelity', 'curvature', 'width_slope'];
  const indicatorGroups = byRealizationGroups(analysis.lines);
  const peakRows: string[] = [];
  const indicatorPlots = kinds.map((kind) => {
    const withIt = indicatorGroups.filter((g) => g.items.some((l) => l.indicators.some((i) => i.name === kind)));
    if (withIt.length === 0) return '';
    const yScale =
      kind === 'gap'
        ? units.energyScale
        : kind === 'fidelity'
          ? 1 / xAxis.scale ** 2
          : kind === 'curvature'
            ? units.energyScale / xAxis.scale ** 2
            : 1 / xAxis.scale;
    const unit = INDICATOR_UNITS[kind](xAxis, units);
    const series = evenlyChosen(withIt, MAX_SERIES).map((g, k) => {
      const indicators = g.items.flatMap((l) => l.indicators.filter((i) => i.name === kind));
      const curve = meanCurve(indicators.map((i) => ({ x: i.x, y: i.y })));
      const peaks = indicators.flatMap((i) => (i.peak ? [i.peak.position] : []));
      const peak = meanAndError(peaks);
      peakRows.push(
        `<tr><td>${esc(INDICATOR_SHORT[kind])}</td><td>${esc(named(g.fixed))}</td><td>${peaks.length} of ${g.items.length}</td><td>${peak ? esc(`${fmt(scaleX(peak.mean), 6)}${peak.error === null ? '' : ` ± ${fmt(peak.error * (xAxis.scale ?? 1), 2)}`}`) : '-'}</td></tr>`,
      );
      return {
        name: named(g.fixed),
        x: curve.x.map(scaleX),
        y: curve.y.map((v) => v * yScale),
        yErr: curve.yErr.map((e) => (e === null ? null : e * yScale)),
        style: k,
      };
    });
    return renderLinePlot({
      logX,
      id: `ensemble-indicator-${kind}`,
      title: `${INDICATOR_SHORT[kind]}: the mean over realizations of each realization's indicator`,
      xLabel: axisTitle(xAxis),
      yLabel: unit ? `${INDICATOR_SHORT[kind]} [${unit}]` : INDICATOR_SHORT[kind],
      series,
    });
  });
  const peakTable =
    peakRows.length > 0
      ? `<div class="table-wrap"><table class="peaks"><tr><th>indicator</th><th>other axes</th><th>realizations with an extremum</th><th>${esc(`position (mean ± standard error) [${xAxis.unit || '-'}]`)}</th></tr>${peakRows.join('')}</table></div>`
      : '';
  const realizations = input.axes.find((a) => a.key === REALIZATION_KEY)!.values.length;
  const solved = context.done.length;
  return section(
    'ensemble',
    'Disorder ensemble',
    [...observablePlots, ...indicatorPlots, peakTable],
    `${realizations} realizations (${solved} of ${input.points.length} points solved). Error bars: the standard error of the mean over the realizations solved at each point (sample standard deviation / sqrt(n)); failed and pending realizations are left out of the means and counted in \`rungchain summary RUN\`. Transition indicators: each realization's own indicator curve (its gap, fidelity susceptibility, −d²E₀/dx² and string-width slope along ${xAxis.label}), averaged over the realizations point by point; peak positions: the mean of each realization's own extremum.`,
  );
}

/** The report page: every section the scan has something for, in this order. */
export function renderReport(input: ReportInput): string {
  const context = reportContext(input);
  const sections = [
    ensembleSection(context),
    observablesSection(context),
    heatMapsSection(context),
    spectrumSection(context),
    responseSection(context),
    sectorLevelsSection(context),
    indicatorsSection(context),
    fitsSection(context),
    valuesSection(context),
    populationsSection(context),
    correlationsSection(context),
  ].filter((html): html is string => html !== null);
  return reportPage(context, sections);
}
