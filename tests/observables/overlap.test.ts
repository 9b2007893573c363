// The fidelity between two ground spaces: |<p|q>| for single vectors, and for spaces P (g1 vectors)
// and Q (g2) sqrt(sum_ab |<p_a|q_b>|^2 / max(g1, g2)), which is 1 exactly when the spaces coincide
// (the projector overlap Tr(P Q) / max(g1, g2), linear algebra).
import { describe, expect, it } from 'vitest';
import { groundSpaceOverlap } from '../../src/observables/overlap.js';

const v = (...x: number[]) => Float64Array.from(x);

describe('groundSpaceOverlap', () => {
  it('single real vectors: |<p|q>|, blind to the sign', () => {
    const p = v(1, 0);
    const q = v(Math.SQRT1_2, -Math.SQRT1_2);
    expect(groundSpaceOverlap([p], [q], false)).toBeCloseTo(Math.SQRT1_2, 15);
    expect(groundSpaceOverlap([p], [v(-1, 0)], false)).toBe(1);
    expect(groundSpaceOverlap([p], [v(0, 1)], false)).toBe(0);
  });

  it('complex vectors (interleaved re, im): the modulus of the Hermitian product, blind to a global phase', () => {
    // p = (1, 0), q = e^{i 0.7} (1/2, sqrt(3)/2): |<p|q>| = 1/2.
    const c = Math.cos(0.7);
    const s = Math.sin(0.7);
    const q = v(0.5 * c, 0.5 * s, (Math.sqrt(3) / 2) * c, (Math.sqrt(3) / 2) * s);
    expect(groundSpaceOverlap([v(1, 0, 0, 0)], [q], true)).toBeCloseTo(0.5, 15);
    // i (1, 0) and (1, 0) are the same state.
    expect(groundSpaceOverlap([v(1, 0, 0, 0)], [v(0, 1, 0, 0)], true)).toBeCloseTo(1, 15);
  });

  it('degenerate spaces: 1 for the same plane in another basis, sqrt(1/2) when a line lies in a plane', () => {
    const e1 = v(1, 0, 0);
    const e2 = v(0, 1, 0);
    const r = Math.SQRT1_2;
    expect(groundSpaceOverlap([e1, e2], [v(r, r, 0), v(r, -r, 0)], false)).toBeCloseTo(1, 15);
    expect(groundSpaceOverlap([e1, e2], [v(r, r, 0)], false)).toBeCloseTo(Math.SQRT1_2, 15);
    expect(groundSpaceOverlap([e1, e2], [v(0, 0, 1)], false)).toBe(0);
  });
});
