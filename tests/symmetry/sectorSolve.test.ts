import { describe, expect, it } from 'vitest';
import { splitShare } from '../../src/symmetry/sectorSolve.js';

// Splitting a build between two threads in proportion to their speeds makes both finish together:
// rows r_own / v_own = (n - r_own) / v_helper gives r_own / n = v_own / (v_own + v_helper)
// (arithmetic, common practice). The correctness of split builds themselves is checked in
// tests/symmetry/group.test.ts (split and unsplit builds give the same answer).
describe('the split of a sector build between two threads', () => {
  it('gives each thread rows in proportion to its speed', () => {
    expect(splitShare(1000, 1000, 0.5)).toBe(0.5);
    expect(splitShare(2000, 1000, 0.5)).toBeCloseTo(2 / 3, 15);
    expect(splitShare(1000, 1500, 0.5)).toBeCloseTo(0.4, 15);
  });

  it('never hands either thread more than four fifths, and keeps the last share when a time is unusable', () => {
    expect(splitShare(1e6, 1, 0.5)).toBe(0.8);
    expect(splitShare(1, 1e6, 0.5)).toBe(0.2);
    expect(splitShare(Infinity, 1000, 0.45)).toBe(0.45);
    expect(splitShare(0, 1000, 0.45)).toBe(0.45);
    expect(splitShare(Number.NaN, 1000, 0.6)).toBe(0.6);
  });
});
