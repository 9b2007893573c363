import { describe, expect, it } from 'vitest';
import { residualNorm } from '../../src/solver/residual.js';
import type { HermitianOperator } from '../../src/operator/hermitian.js';

describe('residualNorm', () => {
  it('measures ||H v - e v|| of diag(1, 2)', () => {
    const op: HermitianOperator = {
      dim: 2,
      isComplex: false,
      apply: (x, y) => {
        y[0] = x[0];
        y[1] = 2 * x[1];
      },
    };
    // v = (1, 1)/sqrt 2, e = 3/2: H v - e v = (-1/2, 1/2)/sqrt 2, of norm 1/2 (by hand).
    expect(residualNorm(op, Float64Array.of(Math.SQRT1_2, Math.SQRT1_2), 1.5)).toBeCloseTo(0.5, 14);
    expect(residualNorm(op, Float64Array.of(0, 1), 2)).toBe(0);
  });
});
