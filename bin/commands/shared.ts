// Option helpers shared by the commands.
import { defaultMemoryLimit, memoryLimitWarning, parseMemorySize } from '../../src/resources.js';

export const collect = (value: string, previous: string[]) => previous.concat([value]);

export function memoryLimit(opts: { maxMemory?: string }): number {
  if (!opts.maxMemory) return defaultMemoryLimit();
  const limit = parseMemorySize(opts.maxMemory);
  const warning = memoryLimitWarning(limit);
  if (warning) process.stderr.write(`rungchain: warning: ${warning}\n`);
  return limit;
}
