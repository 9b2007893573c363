// A solve started from one of its own ground states still finds every copy of the ground level.
// Four free three-level rings threaded by flux pi (phase pi/3 per link): by Bloch's theorem each
// ring has levels -2 J cos((2 pi m + pi) / 3), m = 0, 1, 2, that is -1 twice and 2, so the chain's
// ground level is -4, 2^4 = 16-fold. A cold solve converges to the ground-space component of its
// random start; a warm start from that very vector left the verification runs the same random
// start, whose component in the level was then all deflated, and the level came out 1-fold yet
// "complete" (seeds 2 and 3: 15 and 1 copies).

import { describe, expect, it } from 'vitest';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';

describe('a warm start from a ground state', () => {
  it.each([1, 2, 3, 4, 5])('finds all 16 copies of four flux-pi rings (seed %i)', (seed) => {
    const raw = {
      chain: { sites: 4 },
      levels: { count: 3, boundary: 'ring', phase: Math.PI / 3 },
      solve: { states: 1, symmetries: 'none', seed },
    };
    const cold = solvePoint(validateSpec(structuredClone(raw)));
    expect(cold.record.solver.method).toBe('lanczos');
    expect(cold.record.solver.degeneracy).toBe(16);
    const warm = solvePoint(validateSpec(structuredClone(raw)), { initial: cold.groundStates[0] });
    expect(warm.record.energies[0]).toBeCloseTo(-4, 9);
    expect(warm.record.solver.degeneracy).toBe(16);
    expect(warm.record.solver.degeneracy_complete).toBe(true);
  });
});
