// evolve of a disorder realization (issue 20): each site's own level Hamiltonian and each pair's own
// exchange reach the propagator. A single excitation on a 4-site chain with noise on every term and
// partial filling (evolve.initial given per site of the full chain), against exp(-i H t) of the dense build of docs/model.md
// (tests/support/occupationReference.ts: evolveDense, from ml-matrix's eigendecomposition of H) with
// the values drawn by the reference generator of tests/support/disorderReference.ts.
import { describe, expect, it } from 'vitest';
import { planEvolution, runEvolution, traceJson } from '../../src/dynamics/evolution.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, evolveDense, groundMixture, observablesFrom } from '../support/occupationReference.js';
import { realizeChain, type DisorderRaw } from '../support/disorderReference.js';

const TIMES = [0, 0.5, 1.3];

describe('a disorder realization evolves under its own Hamiltonian', () => {
  it.each([0, 1, 2])('realization %i against dense exp(-iHt)', (realization) => {
    const base = {
      chain: { sites: 5 },
      levels: { count: 3, tunnelling: [0.6, 0.4], phase: [0.3, -0.2], detuning: [0, 0.2, -0.1] },
      exchange: { strength: 1, range: 'dipolar' },
    };
    const disorder: DisorderRaw = {
      realizations: 3,
      seed: 42,
      filling: 0.8,
      tunnelling: { relative: 0.2 },
      phase: { absolute: 0.3, correlation: 'per_site' },
      detuning: { absolute: 0.2 },
      exchange: { relative: 0.2 },
    };
    const ref = realizeChain(base, disorder, realization);
    // evolve.initial is given per site of the full chain; a realization keeps its filled sites' entries.
    const full = [0, 0, 1, 0, 0];
    const initial = ref.kept.map((a) => full[a]);
    const raw = {
      ...base,
      solve: { states: 1 },
      disorder: { ...disorder, realization },
      evolve: { initial: full, times: TIMES, tolerance: 1e-11 },
    };
    const trace = traceJson(runEvolution(planEvolution(raw, validateSpec(structuredClone(raw)))));
    const h = buildDense(ref.model);
    const g = groundMixture(h, 1e-10);
    expect(ref.kept.length).toBeLessThanOrEqual(5);
    const N = 3;
    const start = h.configs.findIndex((occ) => initial.every((n, i) => occ[i * N + n] === 1));
    const re0 = new Float64Array(h.dim);
    re0[start] = 1;
    TIMES.forEach((t, k) => {
      const psi = evolveDense(h, g, re0, new Float64Array(h.dim), t);
      const p = psi.re.map((x, s) => x * x + psi.im[s] * psi.im[s]);
      const want = observablesFrom(ref.model, h.configs, p);
      const got = trace.observables.populations[k] as number[][];
      got.forEach((row, i) => row.forEach((x, n) => expect(Math.abs(x - want.populations[i][n])).toBeLessThan(1e-9)));
      expect(Math.abs((trace.observables.return_probability[k] as number) - p[start])).toBeLessThan(1e-9);
    });
  });
});
