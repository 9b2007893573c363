// Option helpers shared by the commands: memory sizes as the user writes them.
import os from 'node:os';
import { describe, expect, it } from 'vitest';
import { memoryLimitWarning, parseMemorySize } from '../../../bin/commands/shared.js';

describe('memory sizes as written', () => {
  // SI prefixes are powers of 1000 and IEC binary prefixes (KiB, MiB, GiB) powers of 1024
  // (IEC 80000-13); a bare letter is binary as Slurm's --mem and ulimit read it (common practice).
  it('reads SI units as powers of 1000 and binary units as powers of 1024', () => {
    expect(parseMemorySize('500MB')).toBe(500e6);
    expect(parseMemorySize('500MiB')).toBe(500 * 2 ** 20);
    expect(parseMemorySize('8GB')).toBe(8e9);
    expect(parseMemorySize('8GiB')).toBe(8 * 2 ** 30);
    expect(parseMemorySize('8Gi')).toBe(8 * 2 ** 30);
    expect(parseMemorySize('1.5 kB')).toBe(1500);
    expect(parseMemorySize('2TB')).toBe(2e12);
    expect(parseMemorySize('8G')).toBe(8 * 2 ** 30);
    expect(parseMemorySize('512m')).toBe(512 * 2 ** 20);
    expect(parseMemorySize('2000000')).toBe(2e6);
    expect(parseMemorySize('4096B')).toBe(4096);
  });

  it('refuses what is not a size, naming the option', () => {
    for (const bad of ['', 'lots', '8XB', '8 GB GB', '-1GB', 'GB']) {
      expect(() => parseMemorySize(bad)).toThrow(/^--max-memory: cannot read/);
    }
  });

  it('warns when a limit is more than the machine has', () => {
    expect(memoryLimitWarning(os.totalmem())).toBeNull();
    expect(memoryLimitWarning(os.totalmem() + 2 ** 30)).toMatch(/--max-memory .* is more than this machine's memory/);
  });
});
