// A spectrum as text: the readable table, and tidy CSV (the curve, or the lines).

import { csv, fmt, fmtNoise, fmtSmall, plural, table } from '../format/tables.js';
import { formatBytes } from '../format/bytes.js';
import type { MemoryEstimate } from '../point/memory.js';
import type { SpectrumResult } from './spectrum.js';
import { momentumText, type SectorLabel } from '../symmetry/group.js';

/** What was probed, in words: "drive on link 0 (phase 0) at q = 0 on every site". */
export function describeProbe(p: SpectrumResult['probe']): string {
  const what =
    p.kind === 'drive'
      ? `drive on link ${p.link} (phase ${fmt(p.phase)})`
      : p.kind === 'level'
        ? `population of level ${p.level}`
        : 'synthetic coordinate';
  const q = p.q.length === 1 ? fmt(p.q[0], 6) : `[${p.q.map((x) => fmt(x, 6)).join(', ')}]`;
  const where = p.sites === 'all' ? 'every site' : `sites ${p.sites.join(', ')}`;
  return `${what} at q = ${q} on ${where}`;
}

/** A sector's quantum numbers: k=2 P+ F- q=3 (only those in use). */
function sectorText(l: SectorLabel): string {
  const parts: string[] = [];
  if (l.momentum !== null) parts.push(`k=${momentumText(l.momentum)}`);
  if (l.parity !== null) parts.push(`P${l.parity > 0 ? '+' : '-'}`);
  if (l.level_flip !== null) parts.push(`F${l.level_flip > 0 ? '+' : '-'}`);
  if (l.charge !== null) parts.push(`q=${l.charge}`);
  return parts.join(' ');
}

export function spectrumText(s: SpectrumResult): string {
  const unit = s.frequency_unit === 'khz' ? 'kHz' : 'model units';
  const cf = s.continued_fraction;
  const width =
    s.broadening.lorentzian > 0
      ? `Lorentzian, half width ${fmt(s.broadening.lorentzian)}`
      : `Gaussian, half width ${fmt(s.broadening.gaussian)}`;
  const hot = s.temperature_model > 0;
  const lanczos = s.method === 'lanczos';
  // "x +- e" where the Lanczos method gives an error bar
  const withError = (x: number, e: number) => (lanczos ? `${fmt(x)} +- ${fmtSmall(e)}` : fmt(x));
  const temperature = hot
    ? `temperature ${fmt(s.temperature)}${s.temperature_unit === 'model' ? '' : ` ${s.temperature_unit}`} (k_B T = ${fmt(s.temperature_model)} in model units), ${
        lanczos
          ? `finite-temperature Lanczos (${plural(s.thermal!.vectors, 'random vector')}, ${plural(s.thermal!.steps, 'step')}, seed ${s.thermal!.seed}; error bars: jackknife over the vectors)`
          : 'exact (every eigenpair)'
      }`
    : 'zero temperature';
  const weights = hot
    ? `weight (sum rule <O+ O>_T - elastic) ${withError(s.weight, s.weight_error)}; elastic (pairs within one level, omega = 0) ${withError(s.elastic_weight, s.elastic_weight_error)}; <O+ O>_T ${withError(s.total_weight, s.total_weight_error)}; lines ${fmt(s.lines_weight)}; inside the window ${fmt(s.window_weight)}`
    : `weight (sum rule <O+ O> - |<0|O|0>|^2) ${fmt(s.weight)}; elastic |<0|O|0>|^2 ${fmt(s.elastic_weight)}; lines ${fmt(s.lines_weight)}; inside the window ${fmt(s.window_weight)}`;
  const out = [
    `spectrum of the ${describeProbe(s.probe)}, ${temperature}`,
    `ground energy ${fmt(s.ground_energy)} (${plural(s.ground_copies, 'copy', 'copies')} averaged${s.ground_copies_complete ? '' : ', maybe not every copy found'}), dimension ${s.dimension}`,
    weights,
    `continued fraction: ${plural(cf.levels, 'level')}, ${cf.exact ? 'exact (Krylov space exhausted)' : `largest change of the curve from half the levels ${fmtSmall(cf.check)} of its peak (tolerance ${fmtSmall(cf.tolerance)})`}${cf.converged ? '' : ', NOT converged'}; ${plural(cf.products, 'product')}, ${fmtSmall(cf.seconds_per_level)} s per level`,
    `run ${cf.sectors ? `in ${plural(cf.sectors.length, 'symmetry sector')} (${cf.sectors.map(sectorText).join('; ')})` : 'on the full space'}, ${cf.orthogonalization === 'full' ? 'fully orthogonalized' : 'three-term recurrence'}`,
    `broadening: ${width} (${unit}); seconds: ground state ${fmt(s.seconds.ground_state, 3)}, spectrum ${fmt(s.seconds.spectrum, 3)}`,
    '',
    `strongest lines (position in ${unit}, weight; an eigenvalue lies within the residual of the position):`,
  ];
  const lineScale = Math.max(s.weight, 1e-300);
  out.push(
    s.lines.length === 0
      ? '  none: the probe has no weight outside the ground space'
      : table(
          ['position', 'weight', 'residual'],
          s.lines.map((l) => [fmt(l.position), fmtNoise(l.weight, lineScale), fmtSmall(l.residual)]),
        ),
  );
  out.push('', `curve (frequency in ${unit}, intensity per ${s.frequency_unit === 'khz' ? 'kHz' : 'unit'}):`);
  const peak = Math.max(...s.intensity.map(Math.abs), 0);
  out.push(
    lanczos
      ? table(
          ['frequency', 'intensity', 'error'],
          s.frequencies.map((f, k) => [fmt(f), fmtNoise(s.intensity[k], peak), fmtSmall(s.intensity_error[k])]),
        )
      : table(
          ['frequency', 'intensity'],
          s.frequencies.map((f, k) => [fmt(f), fmtNoise(s.intensity[k], peak)]),
        ),
  );
  return out.join('\n');
}

/** Tidy CSV: one row per frequency (frequency, intensity, error), or one per line (position, weight, residual). */
export function spectrumCsv(s: SpectrumResult, what: 'curve' | 'lines'): string {
  if (what === 'lines')
    return csv(
      ['position', 'weight', 'residual'],
      s.lines.map((l) => [l.position, l.weight, l.residual]),
    );
  // The standard error of each intensity (0 where the method is exact), so every CSV has the same columns.
  return csv(
    ['frequency', 'intensity', 'error'],
    s.frequencies.map((f, k) => [f, s.intensity[k], s.intensity_error[k]]),
  );
}

/** `check` of a spec with [spectrum]: the continued fraction's memory after the ground solve (one ground copy). */
export function describeSpectrumMemory(estimate: MemoryEstimate, limit: number): string {
  // At T > 0 the estimate has no per-copy part: it sizes the exact or Lanczos method's blocks and chains.
  const method =
    estimate.parts.dense_block !== undefined ? 'exact' : estimate.parts.chains !== undefined ? 'Lanczos' : null;
  const lines = [
    `spectrum memory  ${formatBytes(estimate.totalBytes)} after the ground solve, ${method ? `at the temperature (${method} method)` : 'per copy of the ground level'} (limit ${formatBytes(limit)})`,
  ];
  for (const [part, bytes] of Object.entries(estimate.parts)) lines.push(`  ${part.padEnd(14)} ${formatBytes(bytes)}`);
  return lines.join('\n');
}
