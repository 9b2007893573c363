// Option helpers shared by the commands.
import type { Command } from 'commander';
import type { AnalysisOptions } from '../../src/analysis/transitions.js';
import { InputError } from '../../src/errors/errors.js';
import { defaultMemoryLimit, memoryLimitWarning, parseMemorySize } from '../../src/point/memory.js';

export const collect = (value: string, previous: string[]) => previous.concat([value]);

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
