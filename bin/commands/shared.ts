// Option helpers shared by the commands.
import { defaultMemoryLimit, parseMemorySize } from '../../src/resources.js';

export const collect = (value: string, previous: string[]) => previous.concat([value]);

export function memoryLimit(opts: { maxMemory?: string }): number {
  return opts.maxMemory ? parseMemorySize(opts.maxMemory) : defaultMemoryLimit();
}
