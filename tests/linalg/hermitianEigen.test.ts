import { describe, expect, it } from 'vitest';
import { hermitianEigenvalues, realFormEigen } from '../../src/linalg/hermitianEigen.js';

describe('dense Hermitian eigenvalues through the real embedding', () => {
  it('matches the closed form of a 2 x 2 Hermitian matrix', () => {
    // [[a, b - ic], [b + ic, d]] has eigenvalues (a + d)/2 -+ sqrt(((a - d)/2)^2 + b^2 + c^2) (textbook formula).
    const [a, b, c, d] = [0.7, -0.4, 1.3, -0.2];
    const re = Float64Array.of(a, b, b, d);
    const im = Float64Array.of(0, -c, c, 0);
    const half = Math.hypot((a - d) / 2, b, c);
    const values = hermitianEigenvalues(re, im, 2);
    expect(values[0]).toBeCloseTo((a + d) / 2 - half, 13);
    expect(values[1]).toBeCloseTo((a + d) / 2 + half, 13);
    const real = realFormEigen(re, im, 2, false);
    expect(real.size).toBe(4);
    expect(real.values[0]).toBeCloseTo(real.values[1], 13);
  });

  it('takes a real symmetric matrix as it is', () => {
    const values = hermitianEigenvalues(Float64Array.of(2, 1, 1, 2), null, 2);
    expect(Array.from(values).map((v) => Number(v.toFixed(12)))).toEqual([1, 3]);
  });
});
