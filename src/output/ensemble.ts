// Disorder ensembles (issue 20): a scan with the realization axis summarized per combination of the
// other axes, as mean, standard deviation and standard error over the finished realizations of every
// energy, gap and scalar observable, with the realizations done, failed and pending counted beside
// them (never dropped silently). `summary --realizations` shows the realizations one by one instead.

import type { ScanParams } from '../scan/plan.js';
import type { ScanRunSummary, SummaryRow } from '../scan/scanRun.js';
import { REALIZATION_KEY } from '../spec/disorder.js';
import { csv, fmt, table } from '../format/tables.js';
import { scalarObservablesIn } from '../observables/catalogue.js';

/** Whether a run is a disorder ensemble: its scan has the realization axis. */
export function isEnsemble(summary: ScanRunSummary): boolean {
  return summary.section.axes.some((a) => a.key === REALIZATION_KEY);
}

/** Sample statistics of one quantity over the realizations that have it. */
export interface EnsembleStat {
  /** Realizations with a value (done, and the quantity defined: a gap needs two energies). */
  n: number;
  mean: number | null;
  /** Sample standard deviation (n - 1 in the denominator); null below 2 values. */
  std: number | null;
  /** Standard error of the mean, std / sqrt(n); null below 2 values. */
  stderr: number | null;
}

export interface EnsembleGroup {
  /** The other axes' values. */
  params: ScanParams;
  realizations: { total: number; done: number; failed: number; pending: number };
  /** Quantity name (E0, E1, ..., gap, gap_above_ground, then the scalar observables) to its statistics. */
  stats: Record<string, EnsembleStat>;
}

export function statOf(values: number[]): EnsembleStat {
  const n = values.length;
  if (n === 0) return { n, mean: null, std: null, stderr: null };
  const mean = values.reduce((s, x) => s + x, 0) / n;
  if (n < 2) return { n, mean, std: null, stderr: null };
  const variance = values.reduce((s, x) => s + (x - mean) * (x - mean), 0) / (n - 1);
  const std = Math.sqrt(variance);
  return { n, mean, std, stderr: std / Math.sqrt(n) };
}

/** The quantities averaged, in order: energies E0.., gap, gap_above_ground, scalar observables. */
export function ensembleQuantities(rows: SummaryRow[]): string[] {
  const energies = Math.max(0, ...rows.map((r) => r.record?.result?.energies.length ?? 0));
  const scalars = scalarObservablesIn(rows.map((r) => r.record?.result?.observables));
  return [...Array.from({ length: energies }, (_, k) => `E${k}`), 'gap', 'gap_above_ground', ...scalars];
}

function quantityOf(row: SummaryRow, name: string): number | null {
  const res = row.record?.status === 'done' ? row.record.result : undefined;
  if (!res) return null;
  const energy = /^E(\d+)$/.exec(name);
  const value: unknown = energy
    ? res.energies[Number(energy[1])]
    : name === 'gap'
      ? res.gap
      : name === 'gap_above_ground'
        ? res.gap_above_ground
        : res.observables[name];
  return typeof value === 'number' && Number.isFinite(value) ? value : null;
}

/** One group per combination of the other axes, in the order of their first point. */
export function ensembleGroups(summary: ScanRunSummary): EnsembleGroup[] {
  const others = summary.section.axes.map((a) => a.key).filter((k) => k !== REALIZATION_KEY);
  const quantities = ensembleQuantities(summary.rows);
  const byKey = new Map<string, { params: ScanParams; rows: SummaryRow[] }>();
  for (const row of summary.rows) {
    const params: ScanParams = {};
    for (const k of others) params[k] = row.params[k];
    const key = JSON.stringify(others.map((k) => params[k]));
    const group = byKey.get(key) ?? { params, rows: [] };
    group.rows.push(row);
    byKey.set(key, group);
  }
  return [...byKey.values()].map(({ params, rows }) => {
    const realizations = { total: rows.length, done: 0, failed: 0, pending: 0 };
    for (const r of rows) realizations[r.status]++;
    const stats: Record<string, EnsembleStat> = {};
    for (const q of quantities)
      stats[q] = statOf(rows.map((r) => quantityOf(r, q)).filter((x): x is number => x !== null));
    return { params, realizations, stats };
  });
}

export function ensembleJson(summary: ScanRunSummary): Record<string, unknown>[] {
  return ensembleGroups(summary).map((g) => ({ ...g.params, realizations: g.realizations, ...g.stats }));
}

export function ensembleCsv(summary: ScanRunSummary): string {
  const groups = ensembleGroups(summary);
  const others = summary.section.axes.map((a) => a.key).filter((k) => k !== REALIZATION_KEY);
  const quantities = ensembleQuantities(summary.rows);
  const header = [
    ...others,
    'realizations',
    'done',
    'failed',
    'pending',
    ...quantities.flatMap((q) => [`${q}.mean`, `${q}.std`, `${q}.stderr`, `${q}.n`]),
  ];
  const body = groups.map((g) => [
    ...others.map((k) => g.params[k]),
    g.realizations.total,
    g.realizations.done,
    g.realizations.failed,
    g.realizations.pending,
    ...quantities.flatMap((q) => [g.stats[q].mean, g.stats[q].std, g.stats[q].stderr, g.stats[q].n]),
  ]);
  return csv(header, body);
}

const meanText = (s: EnsembleStat | undefined): string =>
  !s || s.mean === null ? '' : s.stderr === null ? fmt(s.mean, 8) : `${fmt(s.mean, 8)} ± ${fmt(s.stderr, 2)}`;

export function ensembleText(summary: ScanRunSummary): string {
  const groups = ensembleGroups(summary);
  const others = summary.section.axes.map((a) => a.key).filter((k) => k !== REALIZATION_KEY);
  const shown = ['E0', 'gap', 'string_width'];
  const rows = groups.map((g) => [
    ...others.map((k) => {
      const v = g.params[k];
      return typeof v === 'number' ? fmt(v, 8) : typeof v === 'string' ? v : JSON.stringify(v);
    }),
    `${g.realizations.done}/${g.realizations.total}`,
    String(g.realizations.failed),
    String(g.realizations.pending),
    ...shown.map((q) => meanText(g.stats[q])),
  ]);
  const c = summary.counts;
  return [
    table(
      [
        ...others,
        'done',
        'failed',
        'pending',
        'E0 (mean ± std. error)',
        'gap (mean ± std. error)',
        'string width (mean ± std. error)',
      ],
      rows,
    ),
    '',
    `${c.done} done, ${c.failed} failed, ${c.pending} pending of ${c.total} points; means over the finished realizations of each row (standard error: sample standard deviation / sqrt(n)); every quantity in --json/--csv; one by one: --realizations`,
  ].join('\n');
}
