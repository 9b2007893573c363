// Summaries of a scan's run folder: one row per point (readable, CSV or JSON), per-site and
// per-level observables in long format, and done / failed / pending counts.

import os from 'node:os';
import { lockIsStale, readLock, type LockInfo } from '../runs/runFiles.js';
import type { ScanParams, ScanValue } from '../scan/plan.js';
import type { ScanRunSummary, SummaryRow } from '../scan/scanRun.js';
import { columnScale, csv, fmt, fmtNoise, table } from '../format/tables.js';
import { formatBytes } from '../format/bytes.js';
import { longObservables, pointScalar, scalarObservablesIn } from '../observables/catalogue.js';
import { observableValue } from '../analysis/transitions.js';

function finished(summary: ScanRunSummary): SummaryRow[] {
  return summary.rows.filter((r) => r.record !== null);
}

/** Scalar observables present in any record, in catalogue order. */
function scalarObservables(rows: SummaryRow[]): string[] {
  return scalarObservablesIn(rows.map((r) => r.record?.result?.observables));
}

// ---------------------------------------------------------------------------------------------
// Tidy rows: JSON and CSV

/**
 * One object per finished point: its scanned parameters under their key paths, status, energies,
 * gap and the observables of the output contract (scalar observables also at top level, for
 * plotting tools), with how it was solved.
 */
export function summaryJson(summary: ScanRunSummary): Record<string, unknown>[] {
  const scalars = scalarObservables(summary.rows);
  return finished(summary).map((row) => {
    const r = row.record!;
    const result = r.result;
    const out: Record<string, unknown> = { index: row.index, ...row.params, status: r.status };
    if (r.status === 'failed') out.error = r.error ?? 'unknown';
    out.energies = result ? result.energies : null;
    out.gap = result ? result.gap : null;
    out.gap_above_ground = result ? (result.gap_above_ground ?? null) : null;
    out.observables = result ? result.observables : null;
    // solve.observables = "each": every state's own observables, as the record holds them.
    if (result?.states) out.states = result.states;
    // [spectrum]: the point's spectrum as `spectrum --json` prints it.
    if (r.spectrum) out.spectrum = r.spectrum;
    for (const name of scalars) out[name] = result ? (result.observables[name] ?? null) : null;
    out.dimension = result ? result.basis.dimension : null;
    out.converged = result ? result.solver.converged : null;
    out.degeneracy = result ? result.solver.degeneracy : null;
    out.degeneracy_complete = result ? (result.solver.degeneracy_complete ?? null) : null;
    out.iterations = r.iterations;
    out.warm_start = r.warm_start;
    out.overlap_previous = r.overlap_previous ?? null;
    out.seconds = r.seconds;
    return out;
  });
}

function paramKeys(summary: ScanRunSummary): string[] {
  return summary.section.axes.map((a) => a.key);
}

/** Scalars the JSON holds only inside nested values: the half-chain entropies (from observables.entanglement). */
const ENTANGLEMENT_SCALARS = ['entropy', 'renyi_2'] as const;

/**
 * Tidy CSV: one row per finished point; energies as E0, E1, ...; failed points keep their reason.
 * Every scalar of the JSON is a column, the half-chain entropies too (when any point has them).
 */
export function summaryCsv(summary: ScanRunSummary): string {
  const rows = finished(summary);
  const keys = paramKeys(summary);
  const scalars = scalarObservables(rows);
  const entropies = rows.some((r) => r.record!.result?.observables.entanglement !== undefined)
    ? ENTANGLEMENT_SCALARS
    : [];
  const states = Math.max(0, ...rows.map((r) => r.record!.result?.energies.length ?? 0));
  const each = eachStateScalars(rows);
  const header = [
    'index',
    ...keys,
    'status',
    ...Array.from({ length: states }, (_, k) => `E${k}`),
    'gap',
    'gap_above_ground',
    ...scalars,
    ...entropies,
    ...each.map(({ state, name }) => `states.${state}.${name}`),
    'dimension',
    'converged',
    'degeneracy',
    'degeneracy_complete',
    'iterations',
    'warm_start',
    'overlap_previous',
    'seconds',
    'error',
  ];
  const body = rows.map((row) => {
    const r = row.record!;
    const res = r.result;
    return [
      row.index,
      ...keys.map((k) => row.params[k]),
      r.status,
      ...Array.from({ length: states }, (_, k) => res?.energies[k]),
      res?.gap,
      res?.gap_above_ground,
      ...scalars.map((s) => res?.observables[s]),
      ...entropies.map((s) => (res ? observableValue(res, s) : undefined)),
      ...each.map(({ state, name }) => res?.states?.[state]?.observables[name]),
      res?.basis.dimension,
      res?.solver.converged,
      res?.solver.degeneracy,
      res?.solver.degeneracy_complete,
      r.iterations,
      r.warm_start,
      r.overlap_previous,
      r.seconds,
      r.error,
    ];
  });
  return csv(header, body);
}

/**
 * solve.observables = "each": the scalar observables of each state, as columns `states.<k>.<name>`
 * (the JSON path), state by state, for every state index and scalar any point holds.
 */
function eachStateScalars(rows: SummaryRow[]): { state: number; name: string }[] {
  const lists = rows.map((r) => r.record!.result?.states ?? []);
  const count = Math.max(0, ...lists.map((l) => l.length));
  const names = scalarObservablesIn(lists.flatMap((l) => l.map((s) => s.observables)));
  return Array.from({ length: count }, (_, state) => names.map((name) => ({ state, name }))).flat();
}

// ---------------------------------------------------------------------------------------------
// Long format: per-site, per-level, per-site-pair and per-momentum observables

export interface LongRow {
  index: number;
  params: ScanParams;
  /** The state whose own observables these are (solve.observables = "each"); null for the ground level's. */
  state: number | null;
  observable: string;
  /** Site i; for per-momentum observables (level_structure_factor) the momentum index m, q = 2 pi m / L; null for per-separation observables (level_correlation_by_separation). */
  site: number | null;
  /** Level n for per-site-and-level observables (populations); null otherwise. */
  level: number | null;
  /** The second site j for per-site-pair observables (pair_separation, level_correlation); null otherwise. */
  other_site: number | null;
  /** The separation vector [x, y, z] for per-separation observables; null otherwise. */
  separation: number[] | null;
  /** The frequency of a spectrum's row (observable "spectrum": the intensity there); null otherwise. */
  frequency?: number | null;
  value: number;
}

/** Rows of the ground level's observables, then (solve.observables = "each") those of each state in turn. */
export function longRows(summary: ScanRunSummary): LongRow[] {
  const out: LongRow[] = [];
  for (const row of summary.rows) {
    const result = row.record?.result;
    if (!result?.observables) continue;
    const base = { index: row.index, params: row.params };
    pushLongRows(out, { ...base, state: null }, result.observables);
    for (const s of result.states ?? []) pushLongRows(out, { ...base, state: s.index }, s.observables);
    // [spectrum]: one row per frequency, the intensity as the value.
    const spectrum = row.record?.spectrum;
    if (spectrum)
      spectrum.frequencies.forEach((frequency, k) =>
        out.push({
          ...base,
          state: null,
          observable: 'spectrum',
          site: null,
          level: null,
          other_site: null,
          separation: null,
          frequency,
          value: spectrum.intensity[k],
        }),
      );
  }
  return out;
}

/** Whether any row is a spectrum's (the long outputs then gain a `frequency` column). */
function hasFrequencies(rows: LongRow[]): boolean {
  return rows.some((r) => r.frequency !== undefined && r.frequency !== null);
}

function pushLongRows(
  out: LongRow[],
  base: Pick<LongRow, 'index' | 'params' | 'state'>,
  obs: Record<string, unknown>,
): void {
  for (const { name, shape, diagonal } of longObservables('scan')) {
    const values = obs[name];
    if (!Array.isArray(values)) continue;
    const none = { level: null, other_site: null, separation: null };
    if (shape === 'per site and level')
      (values as number[][]).forEach((p, i) =>
        p.forEach((value, n) => out.push({ ...base, ...none, observable: name, site: i, level: n, value })),
      );
    else if (shape === 'per separation')
      for (const entry of values as { separation: number[]; value: number }[])
        out.push({ ...base, ...none, observable: name, site: null, separation: entry.separation, value: entry.value });
    else if (shape === 'per site pair')
      // Symmetric: each pair once, and the diagonal where it is not zero by definition.
      (values as number[][]).forEach((p, i) =>
        p.forEach((value, j) => {
          if (j > i || (diagonal && j === i))
            out.push({ ...base, ...none, observable: name, site: i, other_site: j, value });
        }),
      );
    else
      // Per site, or per momentum with m where the site goes (absent, null, on open chains).
      (values as number[]).forEach((value, i) => out.push({ ...base, ...none, observable: name, site: i, value }));
  }
}

/** Whether any row is a state's own (the long outputs then gain a `state` column). */
function hasStates(rows: LongRow[]): boolean {
  return rows.some((r) => r.state !== null);
}

/** Whether any row is by separation vector (the long outputs then gain a `separation` column). */
function hasSeparations(rows: LongRow[]): boolean {
  return rows.some((r) => r.separation !== null);
}

/** A separation vector for tables and CSV cells: its components separated by spaces. */
function showSeparation(v: number[] | null): string {
  return v === null ? '' : v.map((x) => fmt(x, 6)).join(' ');
}

export function longJson(summary: ScanRunSummary): Record<string, unknown>[] {
  const rows = longRows(summary);
  const states = hasStates(rows);
  const separations = hasSeparations(rows);
  const frequencies = hasFrequencies(rows);
  return rows.map((r) => ({
    index: r.index,
    ...r.params,
    ...(states ? { state: r.state } : {}),
    observable: r.observable,
    site: r.site,
    level: r.level,
    other_site: r.other_site,
    ...(separations ? { separation: r.separation } : {}),
    ...(frequencies ? { frequency: r.frequency ?? null } : {}),
    value: r.value,
  }));
}

export function longCsv(summary: ScanRunSummary): string {
  const keys = paramKeys(summary);
  const rows = longRows(summary);
  const states = hasStates(rows);
  const separations = hasSeparations(rows);
  const frequencies = hasFrequencies(rows);
  return csv(
    [
      'index',
      ...keys,
      ...(states ? ['state'] : []),
      'observable',
      'site',
      'level',
      'other_site',
      ...(separations ? ['separation'] : []),
      ...(frequencies ? ['frequency'] : []),
      'value',
    ],
    rows.map((r) => [
      r.index,
      ...keys.map((k) => r.params[k]),
      ...(states ? [r.state] : []),
      r.observable,
      r.site,
      r.level,
      r.other_site,
      ...(separations ? [r.separation === null ? null : r.separation.join(' ')] : []),
      ...(frequencies ? [r.frequency ?? null] : []),
      r.value,
    ]),
  );
}

export function longText(summary: ScanRunSummary): string {
  const keys = paramKeys(summary);
  const rows = longRows(summary);
  const states = hasStates(rows);
  // Each observable's rounding noise is measured against 1 (probabilities, levels) or its largest value.
  const scales = new Map<string, number>();
  for (const r of rows) scales.set(r.observable, Math.max(scales.get(r.observable) ?? 1, Math.abs(r.value)));
  const separations = hasSeparations(rows);
  const frequencies = hasFrequencies(rows);
  return table(
    [
      'point',
      ...keys,
      ...(states ? ['state'] : []),
      'observable',
      'site',
      'level',
      'other site',
      ...(separations ? ['separation'] : []),
      ...(frequencies ? ['frequency'] : []),
      'value',
    ],
    rows.map((r) => [
      String(r.index),
      ...keys.map((k) => showValue(r.params[k])),
      // The ground level's rows (state empty), then each state's.
      ...(states ? [r.state === null ? '' : String(r.state)] : []),
      r.observable,
      r.site === null ? '' : String(r.site),
      r.level === null ? '' : String(r.level),
      r.other_site === null ? '' : String(r.other_site),
      ...(separations ? [showSeparation(r.separation)] : []),
      ...(frequencies ? [r.frequency === undefined || r.frequency === null ? '' : fmt(r.frequency, 8)] : []),
      fmtNoise(r.value, scales.get(r.observable)!, 8),
    ]),
  );
}

// ---------------------------------------------------------------------------------------------
// Readable

function showValue(v: ScanValue | undefined): string {
  if (v === undefined) return '';
  return typeof v === 'number' ? fmt(v, 8) : typeof v === 'string' ? v : JSON.stringify(v);
}

export function summaryText(summary: ScanRunSummary): string {
  const keys = paramKeys(summary);
  // Energies and gaps are rounding noise below the energies' scale; widths below 1 or their own.
  const energyScale = columnScale(summary.rows.map((row) => row.record?.result?.energies[0]));
  const widthScale = columnScale(
    summary.rows.map((row) => row.record?.result?.observables.string_width),
    1,
  );
  const rows = summary.rows.map((row) => {
    const r = row.record;
    const res = r?.result;
    return [
      String(row.index),
      ...keys.map((k) => showValue(row.params[k])),
      row.status +
        (res && !res.solver.converged ? ' (not converged)' : '') +
        (res && res.solver.degeneracy_complete === false ? ' (incomplete level)' : ''),
      res ? fmtNoise(res.energies[0], energyScale, 10) : '',
      res ? fmtNoise(res.gap, energyScale, 6) : '',
      res ? fmtNoise(res.observables.string_width, widthScale, 6) : '',
      res ? String(res.basis.dimension) : '',
      r && r.status === 'done' ? `${r.iterations}${r.warm_start ? ' w' : ''}` : '',
      r ? fmt(r.seconds, 3) : '',
    ];
  });
  const out = [
    table(
      ['point', ...keys, 'status', 'E0', 'gap', pointScalar('string_width')!.short, 'dim', 'products', 'seconds'],
      rows,
    ),
  ];
  const c = summary.counts;
  out.push('');
  out.push(
    `${c.done} done, ${c.failed} failed, ${c.pending} pending of ${c.total}` +
      (summary.rows.some((r) => r.record?.warm_start)
        ? "   (w: Lanczos started from the previous point's ground state)"
        : ''),
  );
  const incomplete = summary.rows
    .filter((r) => r.record?.result?.solver.degeneracy_complete === false)
    .map((r) => r.index);
  if (incomplete.length > 0) {
    out.push(
      `WARNING: ${incomplete.length} point(s) (${incomplete.slice(0, 10).join(', ')}${incomplete.length > 10 ? ', ...' : ''}) found not every copy of their ground level: their observables average only the copies found`,
    );
  }
  const failures = summary.rows.filter((r) => r.status === 'failed');
  for (const f of failures.slice(0, 20)) out.push(`point ${f.index} failed: ${f.record!.error}`);
  if (failures.length > 20) out.push(`... and ${failures.length - 20} more failed points`);
  return out.join('\n');
}

// ---------------------------------------------------------------------------------------------
// Status

function writerState(dir: string): { lock: LockInfo | null; running: boolean } {
  const lock = readLock(dir);
  if (!lock) return { lock: null, running: false };
  return { lock, running: !lockIsStale(lock) };
}

/** What the status text says about going on, in the command line's words (it knows how rungchain was started and its flags). */
export interface StatusAdvice {
  /** The command that continues this run; shown when points are left and no writer is running. */
  resumeCommand: (summary: ScanRunSummary) => string;
  /** Shown beside a count of failed points. */
  retryFailed: string;
}

export function statusText(summary: ScanRunSummary, advice?: StatusAdvice): string {
  const { manifest, counts } = summary;
  const { lock, running } = writerState(summary.dir);
  const axes = summary.section.axes
    .map((a) => `${a.key} (${a.values.length})`)
    .join(summary.section.zip ? ' with ' : ' x ');
  const lines = [
    `run folder   ${summary.dir}`,
    `scan         ${counts.total} points, ${summary.section.zip ? 'zipped' : 'grid'}: ${axes}`,
    `started      ${manifest.created} on ${manifest.machine?.hostname ?? '?'} (rungchain ${manifest.version})`,
    `done         ${counts.done}`,
    `failed       ${counts.failed}${counts.failed > 0 && advice ? `   (${advice.retryFailed})` : ''}`,
    `pending      ${counts.pending}`,
    `records      ${summary.records} in ${formatBytes(summary.fileBytes)}` +
      (summary.tornBytes > 0
        ? `, then ${summary.tornBytes} bytes of an unfinished record${running ? ' (being written)' : ' (dropped on resume)'}`
        : ', intact'),
    `writer       ${running && lock ? `running: pid ${lock.pid} on ${lock.hostname} since ${lock.started}` : lock ? `none (stale lock of pid ${lock.pid} on ${lock.hostname}; taken over on resume)` : 'none'}`,
  ];
  if (lock && lock.hostname !== os.hostname())
    lines.push(`             (the lock is from another machine; it cannot be checked from here)`);
  if (advice && !running && counts.pending + counts.failed > 0 && typeof manifest.spec_path === 'string')
    lines.push(`resume with  ${advice.resumeCommand(summary)}`);
  return lines.join('\n');
}

export function statusJson(summary: ScanRunSummary): Record<string, unknown> {
  const { lock, running } = writerState(summary.dir);
  return {
    dir: summary.dir,
    identity: summary.manifest.identity,
    ...summary.counts,
    records: summary.records,
    torn_bytes: summary.tornBytes,
    running,
    writer: running ? lock : null,
  };
}
