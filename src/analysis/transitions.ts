// Analysis of a finished scan: transition indicators along the scanned parameter (one set per line
// of the other axes), and finite-size fits when chain.sites or levels.count is an axis: the
// indicators' peak positions, and any observable the user names, against 1/size^p.
//
// The input is the scan's points in memory (parameters and records), so summaries, reports and
// tests share it whatever the points were read from.

import { REALIZATION_KEY } from '../spec/disorder.js';
import { OptionValueError } from '../errors/errors.js';
import { detectCrossings, sectorText, type Crossing, type CrossingPoint } from './crossings.js';
import { finiteSizeFit, type FitResult } from './fits.js';
import { transitionIndicators, type Indicator, type IndicatorName, type Peak } from './indicators.js';
import { gapAboveGround, type PointRecord } from '../point/solvePoint.js';
import { energyIndex, observableEntry, POINT_SCALARS, pointScalar } from '../observables/catalogue.js';
import type { ScanParams, ScanValue } from '../scan/plan.js';
import type { ScanRunSummary } from '../scan/scanRun.js';
import { columnScale, csv, fmt, fmtNoise, table } from '../format/tables.js';

export interface AnalysisPoint {
  index: number;
  params: ScanParams;
  /** The solved record, or null for failed and pending points. */
  record: PointRecord | null;
  /** |<psi_prev|psi>| with the previous point on the same line of the run (ScanRecord.overlap_previous). */
  overlapPrevious: number | null;
}

export interface AnalysisInput {
  axes: { key: string; values: ScanValue[] }[];
  zip: boolean;
  /** Every point in index order (row-major over the axes, the last fastest). */
  points: AnalysisPoint[];
}

export interface AnalysisOptions {
  /** Axis key the indicators run along (default: the last numeric axis that is not a size). */
  parameter?: string;
  /** Observables to fit against 1/size^p (see observableValue for the names). */
  fit?: string[];
  /** p in 1/size^p (default 1). */
  power?: number;
  /** Coefficients of the fit polynomial in 1/size^p (default 2: a straight line). */
  terms?: number;
}

/** Axes whose values are system sizes, with the letter fits are written in. */
export const SIZE_AXES: Record<string, string> = { 'chain.sites': 'L', 'levels.count': 'N' };

export interface LineAnalysis {
  /** Values of the other axes on this line. */
  fixed: ScanParams;
  sites: number | null;
  levels: number | null;
  /** Level crossings along the line, in ascending order of the parameter. */
  crossings: Crossing[];
  indicators: Indicator[];
}

export interface PeakFit {
  indicator: IndicatorName;
  label: string;
  /** The size axis fitted against. */
  size: string;
  /** Values of the axes other than the size and the parameter. */
  fixed: ScanParams;
  fit: FitResult;
  /**
   * Warnings about the fit: `outside_scan` when the extrapolated position lies outside the scanned
   * range of the parameter (no point of the scan says anything there), `poor_fit` when chi2/dof
   * exceeds PEAK_FIT_CHI2_LIMIT (the positions do not follow the fitted law within their uncertainties).
   */
  flags: ('outside_scan' | 'poor_fit')[];
}

/**
 * chi2/dof above which a peak-position fit is flagged. The weights are the peaks' grid
 * uncertainties, so a fit that describes the positions gives chi2/dof of order 1; 4 leaves room for
 * the uncertainties being half-spacings rather than standard errors (common practice: well above 1
 * means the law does not describe the data).
 */
export const PEAK_FIT_CHI2_LIMIT = 4;

/**
 * The scale observable fits' residuals are measured against, as a fraction of the spread of the
 * fitted values over the sizes. Observables are exact to the solver's precision, so no statistical
 * error sets the scale of a residual; what matters for an extrapolation is whether the law follows
 * the finite-size change it extrapolates. With sigma = 1% of that change and the limit of 4 on
 * chi2/dof (as for peak positions), a fit is poor when its rms residual exceeds 2% of the change.
 */
export const OBSERVABLE_FIT_RESOLUTION = 0.01;
/** chi2/dof (with sigma from OBSERVABLE_FIT_RESOLUTION) above which an observable fit is flagged: the peak fits' limit. */
export const OBSERVABLE_FIT_CHI2_LIMIT = PEAK_FIT_CHI2_LIMIT;

export interface ObservableFit {
  observable: string;
  size: string;
  /** Values of every axis but the size (the parameter included). */
  fixed: ScanParams;
  fit: FitResult;
  /**
   * sigma of the fit check: OBSERVABLE_FIT_RESOLUTION times the spread of the values over the sizes,
   * at least 1e-9 of their largest magnitude (values equal to rounding are not a trend).
   */
  residual_scale: number;
  /** sum (residual / residual_scale)^2 / dof, compared with OBSERVABLE_FIT_CHI2_LIMIT; null without degrees of freedom. */
  scaled_chi2_dof: number | null;
  /**
   * Warnings: `outside_range` when the fitted value at infinite size (a0) lies outside the values the
   * observable can take (a gap or entropy below 0, a condensate fraction above 1; see the catalogue's
   * `range`), `poor_fit` when `scaled_chi2_dof` exceeds OBSERVABLE_FIT_CHI2_LIMIT.
   */
  flags: ('outside_range' | 'poor_fit')[];
}

/** An observable fit with its check: the residual scale, chi2/dof against it, and the flags. */
function checkedObservableFit(observable: string, size: string, fixed: ScanParams, fit: FitResult): ObservableFit {
  const spread = Math.max(...fit.values) - Math.min(...fit.values);
  const magnitude = Math.max(...fit.values.map(Math.abs));
  const scale = Math.max(OBSERVABLE_FIT_RESOLUTION * spread, 1e-9 * magnitude, Number.MIN_VALUE);
  const scaled = fit.dof > 0 ? fit.residuals.reduce((sum, r) => sum + (r / scale) ** 2, 0) / fit.dof : null;
  const range = pointScalar(observable)?.range;
  const a0 = fit.coefficients[0];
  const flags: ObservableFit['flags'] = [];
  if (range && (a0 < range[0] || a0 > range[1])) flags.push('outside_range');
  if (scaled !== null && scaled > OBSERVABLE_FIT_CHI2_LIMIT) flags.push('poor_fit');
  return { observable, size, fixed, fit, residual_scale: scale, scaled_chi2_dof: scaled, flags };
}

export interface ScanAnalysis {
  parameter: string | null;
  /** Whether neighbouring points of a line carry overlaps (the parameter is the innermost axis). */
  overlaps: boolean;
  lines: LineAnalysis[];
  peak_fits: PeakFit[];
  observable_fits: ObservableFit[];
  power: number;
  terms: number;
  notes: string[];
}

const isNumericAxis = (axis: { values: ScanValue[] }) => axis.values.every((v) => typeof v === 'number');

/** The default parameter: the last numeric axis that is not a system size (sizes are for fits). */
export function defaultParameter(axes: AnalysisInput['axes']): string | null {
  for (let k = axes.length - 1; k >= 0; k--) {
    // Realizations of a disorder ensemble are samples, not a parameter a transition runs along.
    if (isNumericAxis(axes[k]) && !(axes[k].key in SIZE_AXES) && axes[k].key !== REALIZATION_KEY) return axes[k].key;
  }
  return null;
}

/** Key of a point's values on the given axes, for grouping. */
function groupKey(params: ScanParams, keys: string[]): string {
  return JSON.stringify(keys.map((k) => params[k] ?? null));
}

/** Items grouped by their values of `keys`, groups and items in first-seen order. */
function groupByKeys<T>(items: T[], paramsOf: (item: T) => ScanParams, keys: string[]): Map<string, T[]> {
  const groups = new Map<string, T[]>();
  for (const item of items) {
    const key = groupKey(paramsOf(item), keys);
    let list = groups.get(key);
    if (!list) groups.set(key, (list = []));
    list.push(item);
  }
  return groups;
}

function pick(params: ScanParams, keys: string[]): ScanParams {
  const out: ScanParams = {};
  for (const k of keys) if (k in params) out[k] = params[k];
  return out;
}

function halfChainEntry(record: PointRecord): { von_neumann: number; renyi_2: number } | null {
  const list = record.observables.entanglement as { cut: number; von_neumann: number; renyi_2: number }[] | undefined;
  if (!Array.isArray(list) || list.length === 0) return null;
  const half = Math.floor(record.basis.sites / 2);
  return list.find((c) => c.cut === half) ?? list[0];
}

/**
 * A scalar of a record by name (the catalogue's POINT_SCALARS): E0, E1, ... (energies), E0/L
 * (ground energy per site), gap, entropy and renyi_2 (half-chain entanglement), per-site
 * observables as their mean over sites (level_mean, spread), or a scalar observable
 * (string_width, ...). Undefined when the record does not have it.
 */
export function observableValue(record: PointRecord, name: string): number | undefined {
  const energy = energyIndex(name);
  if (energy !== null) return record.energies[energy];
  switch (name) {
    case 'E0/L':
      return record.energies[0] / record.basis.sites;
    case 'gap':
      return record.gap ?? undefined;
    case 'entropy':
      return halfChainEntry(record)?.von_neumann;
    case 'renyi_2':
      return halfChainEntry(record)?.renyi_2;
  }
  const value = record.observables[name];
  if (observableEntry(name)?.siteMean) {
    const values = value as number[] | undefined;
    return Array.isArray(values) && values.length > 0 ? values.reduce((s, v) => s + v, 0) / values.length : undefined;
  }
  return typeof value === 'number' ? value : undefined;
}

/** Every scalar name observableValue gives for these records, in catalogue order as each record adds its own. */
export function availableObservables(records: PointRecord[]): string[] {
  const names = new Set<string>(POINT_SCALARS.filter((s) => s.offered === 'always').map((s) => s.name));
  for (const r of records)
    for (const s of POINT_SCALARS)
      if (s.offered !== 'with a value' || observableValue(r, s.name) !== undefined) names.add(s.name);
  return [...names];
}

/**
 * Crossings along one line (points in run order): solved points sorted by the parameter, with the
 * overlap of a pair only when the scan ran them one after the other.
 */
function lineCrossings(group: AnalysisPoint[], parameter: string, overlaps: boolean): Crossing[] {
  const solved = group
    .map((p, runIndex) => ({ p, runIndex, x: p.params[parameter] as number }))
    .filter((e) => e.p.record !== null && Number.isFinite(e.x));
  solved.sort((a, b) => a.x - b.x);
  const points: CrossingPoint[] = solved.map((e, k) => {
    const before = solved[k - 1];
    const after =
      before && before.runIndex === e.runIndex - 1
        ? e.p.overlapPrevious
        : before && before.runIndex === e.runIndex + 1
          ? before.p.overlapPrevious
          : null;
    const record = e.p.record!;
    return {
      x: e.x,
      sectors: record.solver.sector_runs ?? null,
      tolerance: record.solver.tolerance,
      overlapPrevious: overlaps ? after : null,
    };
  });
  return detectCrossings(points);
}

export function analyseScan(input: AnalysisInput, options: AnalysisOptions = {}): ScanAnalysis {
  const power = options.power ?? 1;
  const terms = options.terms ?? 2;
  const notes: string[] = [];
  const keys = input.axes.map((a) => a.key);
  const parameter = options.parameter ?? defaultParameter(input.axes);
  if (options.parameter !== undefined) {
    const axis = input.axes.find((a) => a.key === options.parameter);
    if (!axis)
      throw new OptionValueError('parameter', options.parameter, `not a scanned axis (axes: ${keys.join(', ')})`);
    if (!isNumericAxis(axis))
      throw new OptionValueError('parameter', options.parameter, 'its values are not all numbers');
  }
  if (parameter === null) notes.push('no numeric parameter axis (other than sizes): no transition indicators');

  // The run records overlaps between neighbours along the innermost axis (the whole sequence when zipped).
  const overlaps = parameter !== null && (input.zip || keys[keys.length - 1] === parameter);
  const done = input.points.filter((p) => p.record !== null);

  const lines: LineAnalysis[] = [];
  if (parameter !== null) {
    const others = input.zip ? [] : keys.filter((k) => k !== parameter);
    const groups = groupByKeys(input.points, (p) => p.params, others);
    for (const group of groups.values()) {
      // Keep run order (index order): overlapPrevious pairs each point with the one before it.
      const solved = group.filter((p) => p.record !== null);
      if (solved.length === 0) continue;
      const first = solved[0].record!;
      const sites = first.basis.sites;
      const constantSites = solved.every((p) => p.record!.basis.sites === sites);
      const crossings = constantSites ? lineCrossings(group, parameter, overlaps) : [];
      // Records written before gap_above_ground existed get it from their energies.
      const gapUses = solved.every((p) => p.record!.energies.length > 0)
        ? ('gap_above_ground' as const)
        : ('gap' as const);
      const line = {
        x: group.map((p) => p.params[parameter] as number),
        sites,
        crossings,
        gapUses,
        groundEnergy: group.map((p) => p.record?.energies[0] ?? null),
        gap: group.map((p) =>
          p.record
            ? gapUses === 'gap'
              ? p.record.gap
              : (p.record.gap_above_ground ?? gapAboveGround(p.record.energies, p.record.solver.tolerance))
            : null,
        ),
        stringWidth: group.map((p) => p.record?.observables.string_width ?? null),
        degeneracy: group.map((p) => p.record?.solver.degeneracy ?? null),
        // A missing point breaks the chain of neighbours: its successor's overlap is with a point not on the grid.
        overlapPrevious: overlaps
          ? group.map((p, k) => (k > 0 && group[k - 1].record !== null ? p.overlapPrevious : null))
          : undefined,
      };
      const indicators = constantSites
        ? transitionIndicators(line)
        : transitionIndicators({ ...line, overlapPrevious: undefined, groundEnergy: [] });
      lines.push({
        fixed: pick(group[0].params, others),
        sites: constantSites ? sites : null,
        levels: first.basis.levels,
        crossings,
        indicators,
      });
    }
    if (!overlaps && done.length > 0)
      notes.push(
        `fidelity susceptibility needs ${parameter} to be the innermost axis of the scan (the run records overlaps of neighbours along it)`,
      );
  }

  // Finite-size fits, against each size axis that is scanned with at least two sizes.
  const peakFits: PeakFit[] = [];
  const observableFits: ObservableFit[] = [];
  const sizeAxes = input.axes.filter((a) => a.key in SIZE_AXES && isNumericAxis(a) && new Set(a.values).size >= 2);
  for (const sizeAxis of sizeAxes) {
    const size = sizeAxis.key;
    if (parameter !== null && !input.zip) {
      // Peaks: lines that differ only in this size, fitted together.
      const fixedKeys = keys.filter((k) => k !== size && k !== parameter);
      const groups = groupByKeys(lines, (line) => line.fixed, fixedKeys);
      for (const group of groups.values()) {
        const names = new Set(group.flatMap((l) => l.indicators.map((i) => i.name)));
        for (const name of names) {
          const usable = group
            .map((l) => ({ size: l.fixed[size] as number, indicator: l.indicators.find((i) => i.name === name) }))
            .filter(
              (u): u is { size: number; indicator: Indicator & { peak: Peak } } =>
                u.indicator?.peak != null && u.indicator.kind === 'peak',
            );
          if (new Set(usable.map((u) => u.size)).size < Math.max(2, terms)) continue;
          const fit = finiteSizeFit(
            usable.map((u) => u.size),
            usable.map((u) => u.indicator.peak.position),
            { power, terms, sigmas: usable.map((u) => u.indicator.peak.uncertainty) },
          );
          const range = input.axes.find((a) => a.key === parameter)!.values as number[];
          const flags: PeakFit['flags'] = [];
          if (fit.extrapolated < Math.min(...range) || fit.extrapolated > Math.max(...range))
            flags.push('outside_scan');
          if (fit.dof > 0 && fit.chi2 / fit.dof > PEAK_FIT_CHI2_LIMIT) flags.push('poor_fit');
          peakFits.push({
            indicator: name,
            label: usable[0].indicator.label,
            size,
            fixed: pick(group[0].fixed, fixedKeys),
            fit,
            flags,
          });
        }
      }
    }
    // Named observables: every combination of the other axes, fitted across sizes.
    const fixedKeys = keys.filter((k) => k !== size);
    for (const name of options.fit ?? []) {
      const known = availableObservables(done.map((p) => p.record!));
      if (!known.includes(name) && energyIndex(name) === null) {
        throw new OptionValueError(
          'fit',
          name,
          `not an observable of this run (choose from ${known.join(', ')}, or E1, E2, ...)`,
        );
      }
      const groups = groupByKeys(done, (p) => p.params, fixedKeys);
      for (const group of groups.values()) {
        const usable = group
          .map((p) => ({ size: p.params[size] as number, value: observableValue(p.record!, name) }))
          .filter((u): u is { size: number; value: number } => typeof u.value === 'number' && Number.isFinite(u.value));
        if (new Set(usable.map((u) => u.size)).size < Math.max(2, terms)) continue;
        // E1 >= E0: a gap is never negative.
        const fit = finiteSizeFit(
          usable.map((u) => u.size),
          usable.map((u) => u.value),
          { power, terms, lowerBound: name === 'gap' ? 0 : undefined },
        );
        observableFits.push(checkedObservableFit(name, size, pick(group[0].params, fixedKeys), fit));
      }
    }
  }
  if ((options.fit?.length ?? 0) > 0 && sizeAxes.length === 0) {
    notes.push('--fit needs chain.sites or levels.count as a scan axis with at least two values');
  }
  return { parameter, overlaps, lines, peak_fits: peakFits, observable_fits: observableFits, power, terms, notes };
}

// ---------------------------------------------------------------------------------------------
// Text for summaries

function showParams(params: ScanParams): string {
  const entries = Object.entries(params);
  if (entries.length === 0) return '(all points)';
  return entries.map(([k, v]) => `${k}=${typeof v === 'number' ? fmt(v, 6) : String(v)}`).join(' ');
}

function showPeak(indicator: Indicator | undefined): string {
  if (indicator?.kind === 'crossing' && indicator.crossing)
    return `crossing ${showCrossing(indicator.crossing, indicator.x)}`;
  const peak = indicator?.peak;
  if (!peak) return '-';
  // A position at rounding distance from 0 on the parameter's scale is 0.
  const position = fmtNoise(peak.position, columnScale(indicator.x), 5);
  return `${position} ± ${fmt(peak.uncertainty, 2)}${peak.at_edge ? ' *' : peak.refined ? '' : ' (grid)'}`;
}

function showCrossing(c: Crossing, x: number[]): string {
  const position = fmtNoise(c.position, columnScale(x.length > 0 ? x : c.between), 7);
  const sectors = c.from || c.to ? ` (${sectorText(c.from)} -> ${sectorText(c.to)})` : '';
  return `${position}${c.interpolated ? '' : ' (midpoint)'}${sectors}`;
}

const INDICATOR_COLUMNS: { name: IndicatorName; title: string }[] = [
  { name: 'gap', title: 'gap min' },
  { name: 'fidelity', title: 'fidelity max' },
  { name: 'curvature', title: '-d2E0/dx2 max' },
  { name: 'width_slope', title: 'width slope |max|' },
];

export function analysisText(analysis: ScanAnalysis): string {
  const out: string[] = [];
  if (analysis.parameter !== null && analysis.lines.length > 0) {
    out.push(
      `transition indicators along ${analysis.parameter}: peak position ± half the grid spacing (* at the end of the scan: the peak may lie beyond it; (grid): the grid point, where a parabola does not fit the peak)`,
    );
    const present = INDICATOR_COLUMNS.filter((c) =>
      analysis.lines.some((l) => l.indicators.some((i) => i.name === c.name)),
    );
    out.push(
      table(
        ['line', ...present.map((c) => c.title)],
        analysis.lines.map((l) => [
          showParams(l.fixed),
          ...present.map((c) => showPeak(l.indicators.find((i) => i.name === c.name))),
        ]),
      ),
    );
    const gapUses = analysis.lines.flatMap((l) => l.indicators.filter((i) => i.name === 'gap').map((i) => i.uses))[0];
    if (gapUses)
      out.push(
        `gap min uses ${gapUses}${gapUses === 'gap_above_ground' ? ' (the next level above the degenerate ground level)' : ''}`,
      );
    const crossingRows = analysis.lines.flatMap((l) =>
      l.crossings.map((c) => [
        showParams(l.fixed),
        showCrossing(c, []),
        `${fmt(c.between[0], 6)} .. ${fmt(c.between[1], 6)}`,
        c.detected_by,
      ]),
    );
    if (crossingRows.length > 0) {
      out.push('');
      out.push(
        `level crossings along ${analysis.parameter} (the ground state changes sector; position where the two sectors' lowest levels meet, linear between the grid points)`,
      );
      out.push(table(['line', 'crossing', 'between', 'detected by'], crossingRows));
    }
  }
  const fitRows = (fit: FitResult) => [
    fit.sizes.join(','),
    `${fmt(fit.extrapolated, 7)} ± ${fit.extrapolated_error === null ? '?' : fmt(fit.extrapolated_error, 2)}${fit.bounded ? ` (fit ${fmt(fit.coefficients[0], 3)})` : ''}`,
    fit.coefficients
      .slice(1)
      .map((c) => fmt(c, 5))
      .join(', '),
    fit.residuals.map((r) => fmt(r, 2)).join(', '),
    fit.dof > 0 ? fmt(fit.chi2 / fit.dof, 3) : '-',
  ];
  const flagText = (flags: (PeakFit['flags'][number] | ObservableFit['flags'][number])[]) =>
    flags
      .map((f) =>
        f === 'outside_scan'
          ? 'outside the scan'
          : f === 'outside_range'
            ? 'outside the possible values'
            : `chi2/dof > ${PEAK_FIT_CHI2_LIMIT}`,
      )
      .join(', ') || '-';
  if (analysis.peak_fits.length > 0) {
    out.push('');
    const variable = SIZE_AXES[analysis.peak_fits[0].size];
    out.push(
      `finite-size fits of peak positions: position = a0 + a1 x${analysis.terms > 2 ? ' + a2 x^2 ...' : ''}, x = 1/size^${analysis.power}, weighted by the peak uncertainties`,
    );
    out.push(
      table(
        [
          'indicator',
          'size',
          'fixed',
          'sizes',
          `extrapolated (${variable} -> inf)`,
          'a1...',
          'residuals',
          'chi2/dof',
          'warnings',
        ],
        analysis.peak_fits.map((f) => [
          f.label,
          SIZE_AXES[f.size],
          showParams(f.fixed),
          ...fitRows(f.fit),
          flagText(f.flags),
        ]),
      ),
    );
  }
  if (analysis.observable_fits.length > 0) {
    out.push('');
    out.push(
      `finite-size fits of observables: value = a0 + a1 x${analysis.terms > 2 ? ' + a2 x^2 ...' : ''}, x = 1/size^${analysis.power}; errors from the residual scatter; chi2/dof with sigma = ${OBSERVABLE_FIT_RESOLUTION * 100}% of the values' spread over the sizes`,
    );
    out.push(
      table(
        ['observable', 'size', 'fixed', 'sizes', 'extrapolated', 'a1...', 'residuals', 'chi2/dof', 'warnings'],
        analysis.observable_fits.map((f) => [
          f.observable,
          SIZE_AXES[f.size],
          showParams(f.fixed),
          ...fitRows(f.fit).slice(0, -1),
          f.scaled_chi2_dof === null ? '-' : fmt(f.scaled_chi2_dof, 3),
          flagText(f.flags),
        ]),
      ),
    );
  }
  // With nothing to show, saying there is no parameter axis would only be noise under a summary.
  const notes = out.length > 0 ? analysis.notes : analysis.notes.filter((n) => !n.startsWith('no numeric parameter'));
  for (const note of notes) out.push(`note: ${note}`);
  return out.join('\n');
}

/**
 * The analysis as one tidy CSV table, one row per result: `kind` is `peak` (an indicator's extremum
 * on one line), `crossing` (a level crossing on one line; `refined` holds whether it is interpolated),
 * `peak_fit` (peak positions against 1/size^p) or `observable_fit`; the scanned axes
 * hold the values a row is taken at (empty where the row spans the axis); the remaining columns are
 * empty where they do not apply. Coefficients, sizes and residuals are `;`-separated lists; `flags`
 * are a fit's warnings, `scaled_chi2_dof` an observable fit's chi2/dof against its residual scale.
 */
export function analysisCsv(analysis: ScanAnalysis, axisKeys: string[]): string {
  const header = [
    'kind',
    ...axisKeys,
    'name',
    'size_axis',
    'position',
    'value',
    'uncertainty',
    'at_edge',
    'refined',
    'extrapolated',
    'extrapolated_error',
    'bounded',
    'coefficients',
    'sizes',
    'residuals',
    'chi2',
    'dof',
    'indicator_kind',
    'from',
    'to',
    'flags',
    'scaled_chi2_dof',
  ];
  const list = (values: number[]) => values.join(';');
  const rows: unknown[][] = [];
  for (const line of analysis.lines) {
    for (const indicator of line.indicators) {
      const p = indicator.peak;
      if (!p) continue;
      const c = indicator.kind === 'crossing' ? indicator.crossing : undefined;
      rows.push([
        'peak',
        ...axisKeys.map((k) => line.fixed[k]),
        indicator.name,
        null,
        p.position,
        p.value,
        p.uncertainty,
        p.at_edge,
        p.refined,
        ...new Array<null>(8).fill(null),
        indicator.kind,
        c ? sectorText(c.from) : null,
        c ? sectorText(c.to) : null,
        null,
        null,
      ]);
    }
    for (const c of line.crossings) {
      rows.push([
        'crossing',
        ...axisKeys.map((k) => line.fixed[k]),
        c.detected_by,
        null,
        c.position,
        null,
        null,
        null,
        c.interpolated,
        ...new Array<null>(8).fill(null),
        null,
        sectorText(c.from),
        sectorText(c.to),
        null,
        null,
      ]);
    }
  }
  const fitCells = (fit: FitResult) => [
    fit.extrapolated,
    fit.extrapolated_error,
    fit.bounded,
    list(fit.coefficients),
    list(fit.sizes),
    list(fit.residuals),
    fit.chi2,
    fit.dof,
  ];
  for (const f of analysis.peak_fits) {
    rows.push([
      'peak_fit',
      ...axisKeys.map((k) => f.fixed[k]),
      f.indicator,
      f.size,
      null,
      null,
      null,
      null,
      null,
      ...fitCells(f.fit),
      null,
      null,
      null,
      f.flags.join(';'),
      null,
    ]);
  }
  for (const f of analysis.observable_fits) {
    rows.push([
      'observable_fit',
      ...axisKeys.map((k) => f.fixed[k]),
      f.observable,
      f.size,
      null,
      null,
      null,
      null,
      null,
      ...fitCells(f.fit),
      null,
      null,
      null,
      f.flags.join(';'),
      f.scaled_chi2_dof,
    ]);
  }
  return csv(header, rows);
}

// ---------------------------------------------------------------------------------------------
// From a run folder

/** The analysis input of a scan run read by loadScanRun: done points carry their records. */
export function analysisInputOf(summary: ScanRunSummary): AnalysisInput {
  return {
    axes: summary.section.axes.map((a) => ({ key: a.key, values: a.values })),
    zip: summary.section.zip,
    points: summary.rows.map((row) => {
      const done = row.record?.status === 'done' && row.record.result !== undefined;
      return {
        index: row.index,
        params: row.params,
        record: done ? row.record!.result! : null,
        overlapPrevious: done ? (row.record!.overlap_previous ?? null) : null,
      };
    }),
  };
}
