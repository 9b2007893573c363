// The finite-temperature Lanczos method (Jaklic and Prelovsek, Phys. Rev. B 49, 5065 (1994)) against
// the exact method (itself checked against outside sources in exact.test.ts) on random small specs of
// every kind, within its stated error bars; its error bar shrinking as 1/sqrt(vectors) (the central
// limit theorem, common practice); the open XX chain as free fermions (Lieb, Schultz and Mattis 1961);
// and the ground-state limit against the ground-state solve.

import { describe, expect, it } from 'vitest';
import { validateSpec } from '../../src/spec/spec.js';
import { planThermal, runThermal, type ThermalResult } from '../../src/thermal/thermal.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { rng } from '../support/random.js';

/** Every block run through random vectors (no block small enough to be done densely). */
const STOCHASTIC = { denseBlock: 0, lowStates: 1 };

function run(raw: Record<string, unknown>, temperatures: number[], thermal: Record<string, unknown>): ThermalResult {
  const spec = validateSpec({ ...raw, thermal: { temperatures, ...thermal } });
  return runThermal(spec, planThermal(spec), STOCHASTIC);
}

function randomSpec(r: () => number, id: number): Record<string, unknown> {
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const kind = (['pinned', 'pinned', 'hardcore', 'boson', 'fermion'] as const)[id % 5];
  const N = 2 + Math.floor(r() * 2);
  const L = kind === 'pinned' ? 4 + Math.floor(r() * 2) : 4;
  const particles: Record<string, unknown> = { kind };
  if (kind !== 'pinned') Object.assign(particles, { number: 2, hopping: u(-1, 1) });
  if (kind === 'boson') Object.assign(particles, { max_per_site: 2, onsite: u(0, 2) });
  return {
    chain: { sites: L, boundary: r() < 0.5 ? 'periodic' : 'open' },
    levels: {
      count: N,
      tunnelling: Array.from({ length: N - 1 }, () => u(0.2, 1.2)),
      phase: Array.from({ length: N - 1 }, () => (r() < 0.6 ? 0 : u(-3, 3))),
      detuning: Array.from({ length: N }, () => u(-1, 1)),
    },
    exchange: { strength: u(-1.5, 1.5) },
    ising: { strength: u(-1, 1), moments: Array.from({ length: N }, () => u(-1, 1)) },
    particles,
    solve: { symmetries: r() < 0.5 ? 'auto' : 'none' },
  };
}

const KEYS = ['energy', 'specific_heat', 'entropy', 'free_energy'] as const;

describe('Lanczos against exact, within the error bars', () => {
  const r = rng(4242);
  const temps = [0.1, 0.5, 2];
  for (let id = 0; id < 10; id++) {
    const raw = randomSpec(r, id);
    it(`case ${id}: ${(raw.particles as { kind: string }).kind}`, () => {
      const exact = run(raw, temps, { method: 'exact' });
      const lanczos = run(raw, temps, { method: 'lanczos', vectors: 24, seed: id });
      let outside = 0;
      let count = 0;
      lanczos.rows.forEach((row, t) => {
        for (const key of KEYS) {
          const sigma = row.errors![key];
          const diff = Math.abs(row[key] - exact.rows[t][key]);
          count++;
          // beyond 4 standard errors, or a zero error bar with a difference: a failure
          if (diff > 4 * sigma + 1e-9 * Math.max(1, Math.abs(exact.rows[t][key]))) outside++;
        }
        const mean = row.observables.level_mean;
        if (Array.isArray(mean)) {
          const sigma = row.errors!.observables.level_mean;
          mean.forEach((x, i) => {
            count++;
            // many elements: 5 standard errors keep a chance failure below 1e-5 per element
            if (Math.abs(x - exact.rows[t].observables.level_mean[i]) > 5 * sigma[i] + 1e-9) outside++;
          });
        }
        const width = row.observables.string_width;
        if (typeof width === 'number') {
          count++;
          const sigma = row.errors!.observables.string_width;
          if (Math.abs(width - exact.rows[t].observables.string_width) > 4 * sigma + 1e-9) outside++;
        }
      });
      expect(count).toBeGreaterThan(0);
      expect(outside).toBe(0);
    });
  }
});

describe('error bars shrink as 1/sqrt(vectors)', () => {
  it('four times the vectors halve the error bar (averaged over temperatures and values)', () => {
    const raw = {
      chain: { sites: 6, boundary: 'open' },
      levels: { count: 3, tunnelling: [0.7, 0.5], detuning: [0, 0.2, -0.3] },
      exchange: { strength: 0.9 },
      solve: { symmetries: 'none' },
    };
    const temps = [0.3, 0.8, 2, 5];
    const few = run(raw, temps, { method: 'lanczos', vectors: 16, steps: 60 });
    const many = run(raw, temps, { method: 'lanczos', vectors: 64, steps: 60 });
    const ratios: number[] = [];
    few.rows.forEach((row, t) => {
      for (const key of KEYS) ratios.push(Math.log(row.errors![key] / many.rows[t].errors![key]));
    });
    const ratio = Math.exp(ratios.reduce((a, b) => a + b, 0) / ratios.length);
    // sqrt(64/16) = 2; a jackknife estimate of an error from 16 rounds is itself uncertain by ~20%
    expect(ratio).toBeGreaterThan(1.5);
    expect(ratio).toBeLessThan(2.7);
  });
});

describe('the open XX chain within the error bar', () => {
  // As in exact.test.ts: e_k = 2 V cos(pi k / (L+1)), E = sum e_k f(e_k), C from the occupations.
  it('L = 10, V = 1', () => {
    const L = 10;
    const raw = { chain: { sites: L }, levels: { count: 2, tunnelling: 0 }, exchange: { strength: 1 } };
    const temps = [0.2, 0.6, 1.5, 4];
    const result = run(raw, temps, { method: 'lanczos', vectors: 20 });
    const eps = Array.from({ length: L }, (_, k) => 2 * Math.cos((Math.PI * (k + 1)) / (L + 1)));
    result.rows.forEach((row, t) => {
      const T = temps[t];
      let e = 0;
      let c = 0;
      for (const x of eps) {
        const f = 1 / (Math.exp(x / T) + 1);
        e += x * f;
        c += (x / T) ** 2 * f * (1 - f);
      }
      expect(Math.abs(row.energy - e)).toBeLessThan(4 * row.errors!.energy + 1e-9);
      expect(Math.abs(row.specific_heat - c)).toBeLessThan(4 * row.errors!.specific_heat + 1e-9);
    });
  });
});

describe('the ground-state limit', () => {
  for (const [name, raw] of [
    [
      'periodic 3-level chain (sectors)',
      {
        chain: { sites: 6, boundary: 'periodic' },
        levels: { count: 3, detuning: [0, 0.4, -0.1] },
        exchange: { strength: 0.8 },
      },
    ],
    [
      'degenerate ground level (XX chain of odd length, k and -k)',
      { chain: { sites: 5, boundary: 'periodic' }, levels: { count: 2, tunnelling: 0 }, exchange: { strength: 1 } },
    ],
    [
      'hard-core bosons',
      { chain: { sites: 5 }, levels: { count: 2 }, particles: { kind: 'hardcore', number: 2, hopping: 0.7 } },
    ],
  ] as const) {
    it(name, () => {
      const solved = solvePoint(validateSpec({ ...raw, solve: { states: 1 } }));
      const g = solved.record.solver.degeneracy;
      const T = 1e-3;
      const result = run(raw, [T], { method: 'lanczos', vectors: 4 });
      const row = result.rows[0];
      // far below the gap to the next level, the Gibbs state is the ground level's equal mixture
      expect(row.energy).toBeCloseTo(solved.record.energies[0], 8);
      expect(row.entropy).toBeCloseTo(Math.log(g), 6);
      expect(row.errors!.energy).toBeLessThan(1e-8);
      const ground = solved.record.observables;
      if (typeof row.observables.string_width === 'number')
        expect(row.observables.string_width).toBeCloseTo(ground.string_width, 6);
    });
  }
});
