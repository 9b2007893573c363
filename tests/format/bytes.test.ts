// Byte counts in binary units (IEC 80000-13: KiB = 1024 B, MiB = 1024 KiB, ...), with three
// significant digits as people read them (common practice, as `ls -lh` and `df -h` print sizes).
import { describe, expect, it } from 'vitest';
import { formatBytes } from '../../src/format/bytes.js';

describe('formatBytes', () => {
  it('whole bytes below 1 KiB', () => {
    expect(formatBytes(0)).toBe('0 B');
    expect(formatBytes(1023)).toBe('1023 B');
  });

  it('powers of 1024, two decimals below 10, one below 100, none above', () => {
    expect(formatBytes(1024)).toBe('1.00 KiB');
    expect(formatBytes(1536)).toBe('1.50 KiB');
    expect(formatBytes(50 * 2 ** 20)).toBe('50.0 MiB');
    expect(formatBytes(500 * 2 ** 30)).toBe('500 GiB');
    expect(formatBytes(8e9)).toBe('7.45 GiB');
    expect(formatBytes(2 ** 60)).toBe('1.00 EiB');
  });

  it('past EiB the mantissa in exponent form; no number at all for an infinite size', () => {
    expect(formatBytes(2 ** 60 * 3e9)).toBe('3.00e+9 EiB');
    expect(formatBytes(Infinity)).toBe('more than can be counted');
  });
});
