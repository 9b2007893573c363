// The .npy 1.0 header against the format's definition (NumPy NEP 1, numpy.lib.format): magic,
// version 1.0, little-endian uint16 length, dict padded with spaces and ended by '\n' to 64 bytes.
import { describe, expect, it } from 'vitest';
import { npyFileBytes, npyHeader } from '../../src/format/npy.js';

describe('npy headers', () => {
  it.each([
    ['<f8', [3, 27]],
    ['<c16', [1, 8]],
    ['<f8', [123456, 7890123]],
    ['<c16', [5]],
  ] as const)('%s %j: aligned to 64, the dict NumPy writes', (descr, shape) => {
    const bytes = npyHeader(descr, [...shape]);
    expect(bytes.length % 64).toBe(0);
    expect(Array.from(bytes.subarray(0, 8))).toEqual([0x93, 78, 85, 77, 80, 89, 1, 0]);
    expect(bytes[8] + 256 * bytes[9]).toBe(bytes.length - 10);
    const text = Buffer.from(bytes.subarray(10)).toString('latin1');
    const dims = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
    expect(text.trimEnd()).toBe(`{'descr': '${descr}', 'fortran_order': False, 'shape': ${dims}, }`);
    expect(text.endsWith('\n')).toBe(true);
  });

  it('file size is header plus 8 or 16 bytes an entry', () => {
    expect(npyFileBytes('<f8', [3, 27])).toBe(128 + 3 * 27 * 8);
    expect(npyFileBytes('<c16', [2, 81])).toBe(128 + 2 * 81 * 16);
  });
});
