// A thermal result as text: the readable table, tidy CSV (one row per temperature), and the plan
// that `check` prints.

import { csv, fmt, table } from '../format/tables.js';
import { formatBytes } from '../format/bytes.js';
import { secondsMinutesHours } from '../format/durations.js';
import { EXACT_BLOCK_LIMIT, type ThermalPlan, type ThermalResult, type ThermalRow } from './thermal.js';

const SCALARS = ['energy', 'specific_heat', 'entropy', 'free_energy'] as const;

/** The plan as `check` prints it: the method, why, its memory and rough time. */
export function describeThermalPlan(plan: ThermalPlan): string {
  const s = plan.section;
  const blocks = plan.blocks.length;
  const why =
    s.method === 'auto'
      ? ` (auto: largest block ${plan.largestBlock} ${plan.largestBlock <= EXACT_BLOCK_LIMIT ? '<=' : '>'} ${EXACT_BLOCK_LIMIT})`
      : '';
  const method =
    plan.method === 'exact'
      ? `exact (full spectrum of ${blocks} ${blocks === 1 ? 'block' : 'blocks'}, largest ${plan.largestBlock} in real form)`
      : `finite-temperature Lanczos (${s.vectors} random vectors per block, ${s.steps} steps, seed ${s.seed}; ${blocks} ${blocks === 1 ? 'block' : 'blocks'})`;
  return [
    `thermal: ${method}${why}`,
    `thermal: ${s.entropies ? `${s.entropies.length} entropies per particle (temperatures found by root finding on S(T))` : `${s.temperatures.length} temperatures (${s.unit})`}, memory estimate ${formatBytes(plan.memory.totalBytes)}, about ${secondsMinutesHours(plan.seconds)} on one core (rough)`,
  ].join('\n');
}

function cell(value: number, error: number | undefined): string {
  return error === undefined ? fmt(value, 6) : `${fmt(value, 6)} +- ${fmt(error, 2)}`;
}

/** The readable table: one line per temperature. */
export function describeThermal(result: ThermalResult): string {
  const unit = result.temperature_unit === 'model' ? '' : ` (${result.temperature_unit})`;
  const targets = result.rows.some((r) => r.target_entropy !== undefined);
  const header = [
    ...(targets ? ['S/particle'] : []),
    `T${unit}`,
    'energy',
    'specific heat',
    'entropy',
    'free energy',
    'string width',
  ];
  const rows = result.rows.map((r) => [
    ...(targets ? [fmt(r.target_entropy, 6)] : []),
    fmt(r.temperature, 6),
    ...SCALARS.map((k) => cell(r[k], r.errors?.[k])),
    typeof r.observables.string_width === 'number'
      ? cell(r.observables.string_width, r.errors?.observables.string_width)
      : '-',
  ]);
  const how =
    result.method === 'exact'
      ? 'exact (every eigenstate)'
      : `finite-temperature Lanczos, ${result.lanczos!.vectors} vectors per block, ${result.lanczos!.steps} steps, seed ${result.lanczos!.seed}; +- one standard error`;
  return [
    `thermal equilibrium, ${how}; dimension ${result.dimension}, ${result.sectors} ${result.sectors === 1 ? 'block' : 'blocks'}` +
      (result.symmetries.length > 0 ? ` (${result.symmetries.join(', ')})` : ''),
    `ground energy ${fmt(result.ground_energy, 10)}; k_B = 1, energies in the model's unit`,
    '',
    table(header, rows),
  ].join('\n');
}

/** Per-site observables that become one column per site in the CSV. */
const PER_SITE = ['level_mean', 'spread', 'density'] as const;

function csvColumns(row: ThermalRow): { header: string[]; values: (r: ThermalRow) => unknown[] } {
  const errors = row.errors !== null;
  const target = row.target_entropy !== undefined;
  const header = ['temperature', 'temperature_model', ...(target ? ['target_entropy'] : []), ...SCALARS];
  if (errors) header.push(...SCALARS.map((k) => `${k}_error`));
  const hasWidth = typeof row.observables.string_width === 'number';
  if (hasWidth) header.push('string_width', ...(errors ? ['string_width_error'] : []));
  const sites: [string, number][] = [];
  for (const name of PER_SITE) {
    const v = row.observables[name];
    if (Array.isArray(v)) v.forEach((_, i) => sites.push([name, i]));
  }
  for (const [name, i] of sites) header.push(`${name}.${i}`, ...(errors ? [`${name}.${i}_error`] : []));
  return {
    header,
    values: (r) => {
      const out: unknown[] = [
        r.temperature,
        r.temperature_model,
        ...(target ? [r.target_entropy] : []),
        ...SCALARS.map((k) => r[k]),
      ];
      if (errors) out.push(...SCALARS.map((k) => r.errors?.[k] ?? null));
      if (hasWidth)
        out.push(r.observables.string_width, ...(errors ? [r.errors?.observables.string_width ?? null] : []));
      for (const [name, i] of sites) {
        out.push((r.observables[name] as number[])[i]);
        if (errors) out.push(((r.errors?.observables[name] as number[] | undefined) ?? [])[i] ?? null);
      }
      return out;
    },
  };
}

/** Tidy CSV: one row per temperature, scalar and per-site columns (with _error columns for Lanczos). */
export function thermalCsv(result: ThermalResult): string {
  if (result.rows.length === 0) return csv(['temperature'], []);
  const { header, values } = csvColumns(result.rows[0]);
  return csv(header, result.rows.map(values));
}
