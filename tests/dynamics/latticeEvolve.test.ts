// evolve on a 2D array (issue 19): a single excitation on a 2x3 open square array with a tilted
// field, every term on, against exp(-i H t) of the dense build of docs/model.md
// (tests/support/occupationReference.ts: evolveDense, from ml-matrix's eigendecomposition of H),
// with the pair factors of tests/support/latticeReference.ts. Pinned molecules (one molecule
// excited to level 1) and one itinerant particle hopping on the array's nearest-neighbour bonds.
import { describe, expect, it } from 'vitest';
import { planEvolution, runEvolution, traceJson } from '../../src/dynamics/evolution.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, evolveDense, groundMixture, observablesFrom, type Kind } from '../support/occupationReference.js';
import { describeCase } from '../support/latticeReference.js';

function maxDiff(a: unknown, b: unknown): number {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b);
  if (Array.isArray(a) && Array.isArray(b) && a.length === b.length)
    return a.reduce((m: number, x, k) => Math.max(m, maxDiff(x, b[k])), 0);
  return Infinity;
}

const TIMES = [0, 0.4, 1.1, 2.5];

function scenario(kind: Kind): Record<string, any> {
  const spec: Record<string, any> = {
    lattice: { shape: 'square', size: [2, 3], field: [0.4, -0.3, 1], spacing: [1, 1.2] },
    levels: { count: 2, tunnelling: [0.35], phase: [0.7], detuning: [0, 0.25] },
    exchange: { strength: 1.1, range: 'dipolar' },
    ising: { strength: 0.6, moments: [-0.5, 0.8], range: 'dipolar' },
    solve: { states: 1 },
    // Pinned: site 0's molecule in level 1, the rest in level 0. Itinerant: one particle at site 0, level 1.
    evolve: {
      initial: kind === 'pinned' ? [1, 0, 0, 0, 0, 0] : [1, -1, -1, -1, -1, -1],
      times: TIMES,
      tolerance: 1e-11,
    },
  };
  if (kind !== 'pinned') spec.particles = { kind, number: 1, hopping: 0.8 };
  return spec;
}

describe('a single excitation on a 2x3 open square array against dense exp(-iHt)', () => {
  it.each(['pinned', 'hardcore'] as Kind[])('%s', (kind) => {
    const raw = scenario(kind);
    const model = describeCase(raw, kind);
    const h = buildDense(model);
    const g = groundMixture(h, 1e-10);
    const trace = traceJson(runEvolution(planEvolution(raw, validateSpec(JSON.parse(JSON.stringify(raw))))));
    const N = model.levels;
    const levels = raw.evolve.initial as number[];
    const start = h.configs.findIndex((occ) =>
      levels.every((n, i) => (n < 0 ? occ.slice(i * N, i * N + N).every((k) => k === 0) : occ[i * N + n] === 1)),
    );
    expect(start).toBeGreaterThanOrEqual(0);
    const re0 = new Float64Array(h.dim);
    const im0 = new Float64Array(h.dim);
    re0[start] = 1;
    let moved = 0;
    TIMES.forEach((t, k) => {
      const psi = evolveDense(h, g, re0, im0, t);
      const p = psi.re.map((x, s) => x * x + psi.im[s] * psi.im[s]);
      const ref = observablesFrom(model, h.configs, p);
      // The propagator's documented bound is 1e-11 on the state; populations are quadratic in it.
      expect(maxDiff(trace.observables.populations[k], ref.populations), `populations at t = ${t}`).toBeLessThan(1e-9);
      expect(maxDiff(trace.observables.level_mean[k], ref.level_mean)).toBeLessThan(1e-9);
      expect(Math.abs((trace.observables.return_probability[k] as number) - p[start])).toBeLessThan(1e-9);
      moved = Math.max(moved, 1 - p[start]);
    });
    // The excitation does leave its site: the comparison is not of a frozen state.
    expect(moved).toBeGreaterThan(0.3);
  });
});
