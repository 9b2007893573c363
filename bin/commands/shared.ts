// Option helpers shared by the commands.
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
