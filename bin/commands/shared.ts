// Option helpers shared by the commands.
import type { Command } from 'commander';
import type { AnalysisOptions } from '../../src/analysis/transitions.js';
import os from 'node:os';
import { InputError, ResourceError } from '../../src/errors/errors.js';
import { formatBytes } from '../../src/format/bytes.js';
import { defaultMemoryLimit } from '../../src/point/memory.js';

export const collect = (value: string, previous: string[]) => previous.concat([value]);

/**
 * Parses a memory size as written: SI units are powers of 1000 ("500MB" is 500e6 bytes, also kB,
 * GB, TB), binary units powers of 1024 ("500MiB" is 500 * 2^20, also KiB, GiB, TiB, or "8Gi"), a
 * bare letter ("8G", "512M", as Slurm and ulimit write them) binary too, a plain number bytes.
 */
export function parseMemorySize(text: string, what = '--max-memory'): number {
  const m = /^\s*([0-9]*\.?[0-9]+)\s*(?:([kKmMgGtT])(i?)([bB]?)|([bB]?))\s*$/.exec(text);
  if (!m)
    throw new ResourceError(
      `${what}: cannot read "${text}" as a memory size (e.g. 8GB = 8e9 bytes, 8GiB = 8 * 2^30 bytes)`,
    );
  const power = m[2] ? 'kmgt'.indexOf(m[2].toLowerCase()) + 1 : 0;
  const si = m[2] !== undefined && m[3] === '' && m[4] !== '';
  return Math.floor(parseFloat(m[1]) * (si ? 1000 : 1024) ** power);
}

/** A warning to print when a memory limit is more than this machine has, or null. */
export function memoryLimitWarning(limit: number, what = '--max-memory'): string | null {
  const total = os.totalmem();
  if (limit <= total) return null;
  return `${what} ${formatBytes(limit)} is more than this machine's memory (${formatBytes(total)}); a problem that big would be stopped by the system, not refused here`;
}

export function memoryLimit(opts: { maxMemory?: string }): number {
  if (!opts.maxMemory) return defaultMemoryLimit();
  const limit = parseMemorySize(opts.maxMemory);
  const warning = memoryLimitWarning(limit);
  if (warning) process.stderr.write(`rungchain: warning: ${warning}\n`);
  return limit;
}

/** An empty --out (e.g. an unset shell variable) would write into the current folder or nowhere: refused. */
export function checkOutOption(out: string | undefined, option = '--out'): void {
  if (out !== undefined && out.trim() === '') throw new InputError(`${option}: expected a path, got an empty one`);
}

/** Exit code of a run that finished with points (or traces) that have no result; see the README. */
export const PARTIAL_FAILURE = 3;

export interface AnalysisFlags {
  fit: string[];
  power?: string;
  terms?: string;
  parameter?: string;
}

/** Adds the options that choose the indicators' axis and the finite-size fits. */
export function addAnalysisOptions(command: Command): Command {
  return command
    .option(
      '--parameter <key>',
      'axis the transition indicators run along (default: the last numeric axis that is not a size)',
    )
    .option(
      '--fit <observable>',
      'fit this observable against 1/size^p when chain.sites or levels.count is scanned: E0, E0/L, gap, string_width, entropy, ... (repeatable)',
      collect,
      [],
    )
    .option('--power <p>', 'power p of 1/size in the finite-size fits (default 1)')
    .option('--terms <k>', 'coefficients of the fit polynomial in 1/size^p (default 2: a straight line)');
}

export function analysisOptions(flags: AnalysisFlags): AnalysisOptions {
  const options: AnalysisOptions = { fit: flags.fit, parameter: flags.parameter };
  if (flags.power !== undefined) {
    const p = Number(flags.power);
    if (!Number.isFinite(p) || p <= 0)
      throw new InputError(`--power: expected a positive number, got "${flags.power}"`);
    options.power = p;
  }
  if (flags.terms !== undefined) {
    const k = Number(flags.terms);
    if (!Number.isInteger(k) || k < 1)
      throw new InputError(`--terms: expected a positive integer, got "${flags.terms}"`);
    options.terms = k;
  }
  return options;
}

/** What to do when the `--out` folder holds another run. */
export function otherRunHint(dir: string): string {
  return `choose another --out, or delete ${dir} to start over`;
}
