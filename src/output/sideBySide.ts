// Side-by-side summaries: one scan axis (typically particles.kind) spread into columns, so points
// that differ only in that axis share a row: `rungchain summary RUN --by particles.kind` lays
// hard-core bosons, soft-core bosons and fermions next to each other for the same parameters.
// Each column is `<quantity>[<value>]`: E0, gap and every scalar observable (string_width,
// condensate_fraction, ...) for every value of the axis. A point that failed or is pending leaves
// its cells empty.

import { OptionValueError } from '../errors/errors.js';
import type { ScanParams, ScanValue } from '../scan/plan.js';
import type { ScanRunSummary } from '../scan/scanRun.js';
import { columnScale, csvCell, fmt, fmtNoise, table } from '../format/tables.js';
import { scalarObservablesIn } from '../observables/catalogue.js';

export interface SideBySide {
  /** The axis spread into columns. */
  by: string;
  /** Its values, in axis order. */
  values: ScanValue[];
  /** How each value is written in column names (numbers to the precision the axis needs). */
  labels: string[];
  /** The other axes, one column each, in axis order. */
  keys: string[];
  /** Quantities shown per value: E0, gap, then scalar observables. */
  quantities: string[];
  rows: { params: ScanParams; cells: Record<string, number | null> }[];
}

/** Short names for axes people compare side by side. */
const SHORTHANDS: Record<string, string> = { kind: 'particles.kind' };

function label(value: ScanValue): string {
  return typeof value === 'string' ? value : JSON.stringify(value);
}

/** A written number counts as its value when it is within this fraction of it. */
const LABEL_RELATIVE_ERROR = 1e-3;

/**
 * Labels for an axis's values: numbers with the fewest significant digits that still tell the
 * axis's numbers apart and keep each within 0.1% of its value (a scan's `from`/`to`/`steps` makes
 * values such as 0.236922215742493 that nobody wants as a column name); other values as written.
 */
export function axisLabels(values: ScanValue[]): string[] {
  const numbers = [...new Set(values.filter((v): v is number => typeof v === 'number'))];
  let digits = 1;
  for (; digits < 17; digits++) {
    const written = numbers.map((v) => Number(v.toPrecision(digits)));
    const close = written.every((w, k) => Math.abs(w - numbers[k]) <= LABEL_RELATIVE_ERROR * Math.abs(numbers[k]));
    if (close && new Set(written).size === numbers.length) break;
  }
  return values.map((v) =>
    typeof v === 'number' && Number.isFinite(v) ? String(Number(v.toPrecision(digits))) : label(v),
  );
}

export function columnName(quantity: string, valueLabel: string): string {
  return `${quantity}[${valueLabel}]`;
}

/** Spreads axis `by` of a scan run into columns; the other axes label the rows. */
export function sideBySide(summary: ScanRunSummary, by: string): SideBySide {
  const key = SHORTHANDS[by] ?? by;
  const axes = summary.section.axes;
  const axis = axes.find((a) => a.key === key);
  if (!axis) {
    const scanned = axes.map((a) => a.key).join(', ');
    throw new OptionValueError('by', by, `the scan has no axis ${key} (its axes: ${scanned})`);
  }
  if (summary.section.zip)
    throw new OptionValueError('by', by, 'a zipped scan has no rows that share the other axes; use a grid scan');
  const keys = axes.filter((a) => a.key !== key).map((a) => a.key);

  const scalars = scalarObservablesIn(summary.rows.map((row) => row.record?.result?.observables));
  const quantities = ['E0', 'gap', ...scalars];
  const labels = axisLabels(axis.values);
  const labelOf = new Map(axis.values.map((v, k) => [JSON.stringify(v), labels[k]]));
  const column = (quantity: string, value: ScanValue) =>
    columnName(quantity, labelOf.get(JSON.stringify(value)) ?? label(value));

  const rows: SideBySide['rows'] = [];
  const rowOf = new Map<string, SideBySide['rows'][number]>();
  for (const row of summary.rows) {
    const params: ScanParams = {};
    for (const k of keys) params[k] = row.params[k];
    const id = JSON.stringify(keys.map((k) => params[k]));
    let target = rowOf.get(id);
    if (!target) {
      target = { params, cells: {} };
      for (const q of quantities) for (const value of axis.values) target.cells[column(q, value)] = null;
      rowOf.set(id, target);
      rows.push(target);
    }
    const result = row.record?.status === 'done' ? row.record.result : undefined;
    if (!result) continue;
    const value = row.params[key];
    target.cells[column('E0', value)] = result.energies[0] ?? null;
    target.cells[column('gap', value)] = result.gap;
    for (const name of scalars) {
      const v = result.observables[name];
      target.cells[column(name, value)] = typeof v === 'number' ? v : null;
    }
  }
  return { by: key, values: axis.values, labels, keys, quantities, rows };
}

function columns(view: SideBySide): string[] {
  return view.quantities.flatMap((q) => view.labels.map((l) => columnName(q, l)));
}

/** One object per row: the other axes under their key paths, then a field per column. */
export function sideBySideJson(view: SideBySide): Record<string, unknown>[] {
  return view.rows.map((r) => ({ ...r.params, ...r.cells }));
}

export function sideBySideCsv(view: SideBySide): string {
  const cols = columns(view);
  const lines = [[...view.keys, ...cols].map(csvCell).join(',')];
  for (const r of view.rows)
    lines.push([...view.keys.map((k) => r.params[k]), ...cols.map((c) => r.cells[c])].map(csvCell).join(','));
  return lines.join('\n') + '\n';
}

export function sideBySideText(view: SideBySide): string {
  const cols = columns(view);
  const show = (v: ScanValue | undefined): string =>
    v === undefined ? '' : typeof v === 'number' ? fmt(v, 8) : label(v);
  // Rounding noise is measured per quantity: against the energies for E0 and gap, else against 1 or the quantity's size.
  const cellsOf = (q: string) => view.rows.flatMap((r) => view.labels.map((l) => r.cells[columnName(q, l)]));
  const energyScale = columnScale(cellsOf('E0'));
  const scaleOf = new Map(
    view.quantities.map((q) => [q, q === 'E0' || q === 'gap' ? energyScale : columnScale(cellsOf(q), 1)]),
  );
  const quantityOf = new Map(view.quantities.flatMap((q) => view.labels.map((l) => [columnName(q, l), q] as const)));
  return table(
    [...view.keys, ...cols],
    view.rows.map((r) => [
      ...view.keys.map((k) => show(r.params[k])),
      ...cols.map((c) => (r.cells[c] === null ? '' : fmtNoise(r.cells[c], scaleOf.get(quantityOf.get(c)!)!, 10))),
    ]),
  );
}
