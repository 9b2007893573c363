import { describe, expect, it } from 'vitest';
import { planEvolution, runEvolution, traceJson, type EvolutionResult } from '../../src/dynamics/evolution.js';
import { siteAmplitudes } from '../../src/dynamics/initialState.js';
import { SpecError } from '../../src/errors/errors.js';
import { validateSpec } from '../../src/spec/spec.js';
import { densePinnedHamiltonian } from '../support/reference.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';
import { complexDistance, complexOverlapSquared, denseEvolver } from '../support/denseEvolution.js';
import { denseFockHamiltonian, key, randomItinerantSpec } from '../support/fockReference.js';

interface Traced extends EvolutionResult {
  states: Float64Array[];
}

function trace(raw: Record<string, any>): Traced {
  const tree = clean(raw);
  const plan = planEvolution(tree, validateSpec(tree));
  const states: Float64Array[] = [];
  const result = runEvolution(plan, { onFrame: (_f, state) => states.push(Float64Array.from(state)) });
  return { ...result, states };
}

describe('one molecule, two levels: Rabi oscillations', () => {
  // Rabi's formula (textbook two-level dynamics): H = -J(|1><0| + h.c.) from |0> gives P1(t) = sin^2(J t).
  it('P1(t) = sin^2(J t) on resonance', () => {
    const J = 0.8;
    const r = trace({
      chain: { sites: 1 },
      levels: { count: 2, tunnelling: J },
      evolve: { initial: [0], times: { from: 0, to: 12, steps: 60 }, tolerance: 1e-10 },
    });
    expect(r.times).toHaveLength(61);
    r.frames.forEach((f) => {
      expect(f.observables.populations[0][1]).toBeCloseTo(Math.sin(J * f.time) ** 2, 9);
      expect(f.observables.return_probability).toBeCloseTo(Math.cos(J * f.time) ** 2, 9);
    });
  });

  // Rabi's formula with detuning (textbook): coupling Omega/2 = J and detuning D give
  // P1(t) = (4J^2 / (4J^2 + D^2)) sin^2(sqrt(4J^2 + D^2) t / 2).
  it('detuned: reduced amplitude at the generalized Rabi frequency', () => {
    const J = 0.5;
    const D = 0.7;
    const r = trace({
      chain: { sites: 1 },
      levels: { count: 2, tunnelling: J, detuning: [0, D] },
      evolve: { initial: [0], times: { from: 0, to: 20, steps: 40 }, tolerance: 1e-10 },
    });
    const W = Math.sqrt(4 * J * J + D * D);
    r.frames.forEach((f) => {
      expect(f.observables.populations[0][1]).toBeCloseTo(((4 * J * J) / (W * W)) * Math.sin((W * f.time) / 2) ** 2, 9);
    });
  });

  it('a pulse of area A and phase pi is free evolution for t = A / (2J) (the same Rabi rotation)', () => {
    const J = 1.3;
    for (const A of [0.3, Math.PI / 2, Math.PI, 2.5]) {
      const r = trace({
        chain: { sites: 1 },
        levels: { count: 2, tunnelling: J },
        evolve: { initial: [0], times: [0, A / (2 * J)], tolerance: 1e-11 },
      });
      const pulsed = siteAmplitudes(2, 0, [{ between: [0, 1], area: A, phase: Math.PI, sites: null }], 0);
      expect(complexDistance(r.states[1], pulsed)).toBeLessThan(1e-9);
    }
  });
});

describe('initial states', () => {
  it('one level per site is the basis state with those digits', () => {
    const r = trace({ chain: { sites: 3 }, levels: { count: 3 }, evolve: { initial: [2, 0, 1], times: [0] } });
    const index = 2 + 0 * 3 + 1 * 9;
    expect(r.states[0][2 * index]).toBe(1);
    expect(r.states[0].reduce((s, x) => s + Math.abs(x), 0)).toBe(1);
    expect(r.frames[0].observables.populations).toEqual([
      [0, 0, 1],
      [1, 0, 0],
      [0, 1, 0],
    ]);
  });

  // Pulse area theorem (textbook): area pi/2 makes an equal superposition, pi a full transfer.
  it('pulses make products of per-site superpositions', () => {
    const r = trace({
      chain: { sites: 3 },
      levels: { count: 3 },
      evolve: {
        initial: {
          levels: [0, 0, 1],
          pulses: [
            { between: [0, 1], area: Math.PI / 2, sites: [0, 1] },
            { between: [1, 2], area: Math.PI, sites: [2] },
          ],
        },
        times: [0],
      },
    });
    const p = r.frames[0].observables.populations;
    expect(p[0][0]).toBeCloseTo(0.5, 14);
    expect(p[0][1]).toBeCloseTo(0.5, 14);
    expect(p[1][1]).toBeCloseTo(0.5, 14);
    expect(p[2][2]).toBeCloseTo(1, 14);
    expect(r.frames[0].observables.norm).toBeCloseTo(1, 14);
  });

  // An eigenstate is stationary (textbook): the ground state of the spec itself never changes.
  it('the ground state of the unchanged spec is stationary', () => {
    const raw = clean(randomPinnedSpec(11, 3, 3));
    raw.evolve = { initial: { ground_state: {} }, times: { from: 0, to: 5, steps: 5 }, tolerance: 1e-9 };
    const r = trace(raw);
    const dense = denseEvolver(densePinnedHamiltonian(validateSpec(clean(randomPinnedSpec(11, 3, 3)))));
    for (const f of r.frames) {
      expect(f.observables.return_probability).toBeCloseTo(1, 8);
      expect(f.observables.energy).toBeCloseTo(dense.groundSpace().energy, 8);
    }
  });

  it('a quench from the ground state with changed keys matches dense evolution', () => {
    const base = clean(randomPinnedSpec(5, 3, 2));
    const raw = clean({
      ...base,
      evolve: {
        initial: { ground_state: { 'exchange.strength': 0, 'levels.detuning': [0, 2] } },
        times: [0, 1, 2.5],
        tolerance: 1e-9,
      },
    });
    const r = trace(raw);
    const quenched = clean(structuredClone(base));
    quenched.exchange.strength = 0;
    quenched.levels.detuning = [0, 2];
    const g = denseEvolver(densePinnedHamiltonian(validateSpec(quenched))).groundSpace();
    expect(g.vectors).toHaveLength(1);
    // The start is that ground state up to a phase.
    expect(complexOverlapSquared(g.vectors[0], r.states[0])).toBeCloseTo(1, 10);
    const dense = denseEvolver(densePinnedHamiltonian(validateSpec(base)));
    r.frames.forEach((f, k) => {
      expect(complexDistance(r.states[k], dense.evolve(r.states[0], f.time))).toBeLessThan(1e-9);
    });
  });
});

describe('Krylov propagation against dense exponentiation (ml-matrix eigendecomposition)', () => {
  const cases: [number, number, number, number][] = [
    // seed, sites, levels, krylov size
    [1, 3, 3, 30],
    [2, 4, 2, 8],
    [3, 2, 4, 6],
    [4, 3, 4, 12],
    [5, 5, 2, 30],
  ];
  it.each(cases)(
    'random spec %i (%i sites x %i levels, every term on, m = %i): error below the tolerance',
    (seed, sites, levels, krylov) => {
      const base = clean(randomPinnedSpec(seed, sites, levels));
      const r01 = rng(seed + 100);
      const tolerance = 1e-8;
      const raw = {
        ...base,
        evolve: {
          initial: {
            levels: Array.from({ length: sites }, () => Math.floor(r01() * levels)),
            pulses: [
              { between: [0, 1], area: 3 * r01(), phase: 6 * r01() },
              { between: [levels - 1, levels - 2], area: 3 * r01(), phase: 6 * r01() },
            ],
          },
          times: { from: 0, to: 6, steps: 12 },
          tolerance,
          krylov,
        },
      };
      const r = trace(raw);
      const dense = denseEvolver(densePinnedHamiltonian(validateSpec(clean(base))));
      const e0 = dense.energy(r.states[0]);
      r.frames.forEach((f, k) => {
        const exact = dense.evolve(r.states[0], f.time);
        const error = complexDistance(r.states[k], exact);
        expect(error).toBeLessThan(tolerance);
        // The a posteriori bound is an upper bound (Hochbruck and Lubich 1997), up to rounding.
        expect(error).toBeLessThanOrEqual(f.error_bound + 1e-12);
        // Without a ramp the norm and the energy are conserved (unitary evolution under constant H).
        expect(Math.abs(f.observables.norm - 1)).toBeLessThan(tolerance);
        expect(Math.abs(f.observables.energy - e0)).toBeLessThan(2 * dense.normH * tolerance + 1e-12);
      });
      if (krylov < 10) expect(r.stats.steps).toBeGreaterThan(12);
    },
  );

  it('a tighter tolerance takes more products and gives a smaller error', () => {
    const base = clean(randomPinnedSpec(9, 6, 2));
    const dense = denseEvolver(densePinnedHamiltonian(validateSpec(clean(base))));
    const errors: number[] = [];
    const products: number[] = [];
    for (const tolerance of [1e-3, 1e-10]) {
      const r = trace({
        ...base,
        evolve: { initial: { pulses: [{ between: [0, 1], area: 1 }] }, times: [0, 8], tolerance, krylov: 6 },
      });
      const error = complexDistance(r.states[1], dense.evolve(r.states[0], 8));
      expect(error).toBeLessThan(tolerance);
      errors.push(error);
      products.push(r.stats.matvecs);
    }
    expect(errors[1]).toBeLessThan(errors[0]);
    expect(products[1]).toBeGreaterThan(products[0]);
  });
});

describe('ramps', () => {
  const twoSite = {
    chain: { sites: 2 },
    levels: { count: 3, tunnelling: 1 },
    exchange: { strength: 0 },
  };

  it('a piecewise-constant ramp equals the product of dense exponentials at the piece midpoints', () => {
    const steps = 4;
    const duration = 2;
    const r = trace({
      ...twoSite,
      evolve: {
        initial: [0, 2],
        times: [0, 1.25, 3],
        tolerance: 1e-10,
        ramp: { key: 'exchange.strength', from: 0, to: 3, duration, start: 0.5, steps },
      },
    });
    // Pieces: [0, 0.5] at V = 0; four pieces of 0.5 in [0.5, 2.5] at their midpoint values; then V = 3.
    const at = (V: number) =>
      denseEvolver(densePinnedHamiltonian(validateSpec(clean({ ...twoSite, exchange: { strength: V } }))));
    let psi = at(0).evolve(r.states[0], 0.5);
    const mids = Array.from({ length: steps }, (_, k) => (3 * (k + 0.5)) / steps);
    // t = 1.25 lies in the second piece (0.5 + 0.5 .. 1.5), 0.25 into it.
    const afterFirst = at(mids[0]).evolve(psi, 0.5);
    expect(complexDistance(r.states[1], at(mids[1]).evolve(afterFirst, 0.25))).toBeLessThan(1e-9);
    psi = afterFirst;
    for (let k = 1; k < steps; k++) psi = at(mids[k]).evolve(psi, 0.5);
    psi = at(3).evolve(psi, 0.5);
    expect(complexDistance(r.states[2], psi)).toBeLessThan(1e-9);
    // Energies are of the instantaneous H(t): V(1.25) = 3 * 0.75 / 2.
    expect(r.frames[1].observables.energy).toBeCloseTo(at(1.125).energy(r.states[1]), 9);
    expect(traceJson(r).observables).toHaveProperty('ground_overlap');
  });

  // Sudden approximation (textbook): a ramp much faster than every energy scale leaves the state
  // unchanged, so its weight in the final ground space is |<g_initial|g_final>|^2.
  it('a sudden ramp: ground overlap is the overlap of the two ground states', () => {
    const spec = {
      chain: { sites: 3 },
      levels: { count: 2, tunnelling: 1, detuning: [0, 0.3] },
      exchange: { strength: 0 },
    };
    const r = trace({
      ...spec,
      evolve: {
        initial: 'ground_state',
        times: [0, 1e-6],
        tolerance: 1e-10,
        ramp: { key: 'exchange.strength', from: 0, to: 2, duration: 1e-6, steps: 1 },
      },
    });
    const gi = denseEvolver(densePinnedHamiltonian(validateSpec(clean(spec)))).groundSpace().vectors;
    const gf = denseEvolver(
      densePinnedHamiltonian(validateSpec(clean({ ...spec, exchange: { strength: 2 } }))),
    ).groundSpace().vectors;
    expect(gi).toHaveLength(1);
    expect(gf).toHaveLength(1);
    expect(r.frames[0].observables.ground_overlap).toBeCloseTo(1, 9);
    expect(r.frames[1].observables.ground_overlap).toBeCloseTo(complexOverlapSquared(gi[0], gf[0]), 6);
  });

  // Adiabatic theorem (textbook): a slow ramp through a gapped path keeps the state in the
  // instantaneous ground state; a faster one leaves more behind.
  it('a slow ramp follows the instantaneous ground state, a fast one does not', () => {
    const spec = {
      chain: { sites: 3 },
      levels: { count: 2, tunnelling: 1, detuning: [0, 0.5] },
      exchange: { strength: 0 },
    };
    const overlapAfter = (duration: number): number => {
      const r = trace({
        ...spec,
        evolve: {
          initial: 'ground_state',
          times: [duration],
          tolerance: 1e-8,
          ramp: { key: 'exchange.strength', from: 0, to: 0.5, duration, steps: 200 },
        },
      });
      return r.frames[0].observables.ground_overlap as number;
    };
    // Along V = 0 -> 0.5 the gap falls from 2.1 to 0.95 (dense spectra) and never closes.
    const slow = overlapAfter(60);
    const fast = overlapAfter(0.3);
    expect(slow).toBeGreaterThan(0.99);
    expect(fast).toBeLessThan(slow - 0.01);
  });
});

describe('itinerant particles', () => {
  // One particle hopping between two sites is a two-level system (textbook): P(site 1) = sin^2(t_hop t).
  it('one hard-core boson on two sites oscillates between them', () => {
    const t = 0.6;
    const r = trace({
      chain: { sites: 2 },
      levels: { count: 1 },
      particles: { kind: 'hardcore', number: 1, hopping: t },
      evolve: { initial: [0, -1], times: { from: 0, to: 8, steps: 16 }, tolerance: 1e-10 },
    });
    r.frames.forEach((f) => {
      expect(f.observables.populations[1][0]).toBeCloseTo(Math.sin(t * f.time) ** 2, 9);
      expect((f.observables.density as number[])[0]).toBeCloseTo(Math.cos(t * f.time) ** 2, 9);
    });
  });

  // Hard-core bosons at one per site with no hopping are the pinned model (docs/model.md): the same trace.
  it('hard-core bosons, one per site, t = 0: the pinned dynamics', () => {
    const base = clean(randomPinnedSpec(21, 3, 3));
    const evolve = {
      initial: { levels: [0, 1, 2], pulses: [{ between: [0, 1], area: 1.1, phase: 0.4 }] },
      times: [0, 0.7, 2],
      tolerance: 1e-10,
    };
    const pinned = trace({ ...base, evolve });
    const hardcore = trace({ ...base, particles: { kind: 'hardcore', number: 3 }, evolve });
    pinned.frames.forEach((f, k) => {
      const g = hardcore.frames[k].observables;
      expect(g.energy).toBeCloseTo(f.observables.energy, 9);
      expect(g.return_probability).toBeCloseTo(f.observables.return_probability, 9);
      expect(g.string_width).toBeCloseTo(f.observables.string_width, 9);
      f.observables.populations.forEach((row, i) =>
        row.forEach((p, n) => expect(g.populations[i][n]).toBeCloseTo(p, 9)),
      );
    });
  });
});

describe('every recorded observable reaches the time-first JSON (evolve --json, trace --json), against dense evolution', () => {
  // Diagonal observables from the basis-state probabilities of the dense state exp(-i H t) psi(0)
  // (ml-matrix eigendecomposition), by the definitions of docs/model.md and src/observables/itinerant.ts.
  const probabilities = (psi: Float64Array) =>
    Array.from({ length: psi.length / 2 }, (_, s) => psi[2 * s] ** 2 + psi[2 * s + 1] ** 2);

  it('pinned: pair_separation <(n_i - n_j)^2> at every time', () => {
    const L = 3;
    const N = 3;
    const base = clean(randomPinnedSpec(31, L, N));
    const r = trace({
      ...base,
      evolve: {
        initial: { levels: [0, 2, 1], pulses: [{ between: [0, 1], area: 1.3, phase: 0.2 }] },
        times: { from: 0, to: 3, steps: 6 },
        tolerance: 1e-10,
      },
    });
    const json = traceJson(r);
    const dense = denseEvolver(densePinnedHamiltonian(validateSpec(clean(base))));
    expect(json.observables.pair_separation).toHaveLength(r.times.length);
    r.times.forEach((t, k) => {
      const p = probabilities(dense.evolve(r.states[0], t));
      const got = json.observables.pair_separation[k] as number[][];
      for (let i = 0; i < L; i++)
        for (let j = 0; j < L; j++) {
          let expected = 0;
          p.forEach((q, s) => {
            const level = (site: number) => Math.floor(s / N ** site) % N; // site 0 fastest
            expected += q * (level(i) - level(j)) ** 2;
          });
          expect(got[i][j]).toBeCloseTo(expected, 8);
        }
    });
  });

  it.each([
    ['boson', 3, 2, [0, 1, 1], { maxPerSite: 2 }],
    ['hardcore', 3, 2, [1, -1, 0], {}],
    ['fermion', 3, 2, [0, 1, -1], {}],
  ] as const)('%s: density, double_occupancy and pair_separation at every time', (kind, L, N, levels, options) => {
    const number = levels.filter((n) => n >= 0).length;
    const base = randomItinerantSpec(41, kind, L, N, number, { ...options, complex: true });
    delete base.solve;
    const r = trace({ ...base, evolve: { initial: levels, times: { from: 0, to: 2, steps: 4 }, tolerance: 1e-10 } });
    const json = traceJson(r);
    const ref = denseFockHamiltonian(validateSpec(clean(base)));
    const start = new Array<number>(L * N).fill(0);
    levels.forEach((n, i) => {
      if (n >= 0) start[i * N + n] = 1;
    });
    const psi0 = new Float64Array(2 * ref.dim);
    psi0[2 * ref.indexOf.get(key(start))!] = 1;
    const dense = denseEvolver(ref);
    for (const name of ['density', 'double_occupancy', 'pair_separation'])
      expect(json.observables[name]).toHaveLength(r.times.length);
    r.times.forEach((t, k) => {
      const p = probabilities(dense.evolve(psi0, t));
      const count = (occ: number[], i: number) => occ.slice(i * N, (i + 1) * N).reduce((a, b) => a + b, 0);
      for (let i = 0; i < L; i++) {
        let density = 0;
        let pairs = 0;
        p.forEach((q, s) => {
          const c = count(ref.states[s], i);
          density += q * c;
          pairs += (q * c * (c - 1)) / 2;
        });
        expect((json.observables.density[k] as number[])[i]).toBeCloseTo(density, 8);
        expect((json.observables.double_occupancy[k] as number[])[i]).toBeCloseTo(pairs, 8);
        for (let j = 0; j < L; j++) {
          if (j === i) continue;
          // Mean squared level difference over pairs of particles, one at i and one at j.
          let weighted = 0;
          let both = 0;
          p.forEach((q, s) => {
            const occ = ref.states[s];
            both += q * count(occ, i) * count(occ, j);
            for (let a = 0; a < N; a++)
              for (let b = 0; b < N; b++) weighted += q * (a - b) ** 2 * occ[i * N + a] * occ[j * N + b];
          });
          const expected = both < 1e-12 ? 0 : weighted / both;
          expect((json.observables.pair_separation[k] as number[][])[i][j]).toBeCloseTo(expected, 7);
        }
      }
    });
  });
});

describe('the [evolve] section: bad input names the key path', () => {
  const base = { chain: { sites: 2 }, levels: { count: 3 } };
  const fails = (evolve: unknown, path: RegExp) => {
    const tree = clean({ ...base, evolve });
    let error: unknown;
    try {
      planEvolution(tree, validateSpec(tree));
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(SpecError);
    expect((error as SpecError).keyPath).toMatch(path);
  };
  it.each([
    [{ initial: [0] }, /^evolve\.times$/],
    [{ times: [1, 0.5] }, /^evolve\.times\[1\]$/],
    [{ times: { to: 3 } }, /^evolve\.times\.steps$/],
    [{ times: [1], initial: [0, 1, 2] }, /^evolve\.initial$/],
    [{ times: [1], initial: [0, 3] }, /^evolve\.initial\[1\]$/],
    [{ times: [1], initial: { pulses: [{ between: [0, 0], area: 1 }] } }, /^evolve\.initial\.pulses\[0\]\.between$/],
    [
      { times: [1], initial: { pulses: [{ between: [0, 5], area: 1 }] } },
      /^evolve\.initial\.pulses\[0\]\.between\[1\]$/,
    ],
    [{ times: [1], tolerance: 0 }, /^evolve\.tolerance$/],
    [{ times: [1], krylov: 1 }, /^evolve\.krylov$/],
    [{ times: [1], time_unit: 'ms' }, /^evolve\.time_unit$/],
    [{ times: [1], ramp: { key: 'exchange.strenght', from: 0, to: 1, duration: 1 } }, /^evolve\.ramp\.key$/],
    [{ times: [1], ramp: { key: 'levels.count', from: 3, to: 4, duration: 1 } }, /^evolve\.ramp\.key$/],
    [{ times: [1], ramp: [{ key: 'exchange.strength', from: 0, to: 1 }] }, /^evolve\.ramp\[0\]\.duration$/],
    [
      { times: [1], initial: { ground_state: { 'exchange.range': 'sideways' } } },
      /^evolve\.initial\.ground_state\.exchange\.range$/,
    ],
    [{ times: [1], colour: 'red' }, /^evolve\.colour$/],
    [{ times: [1], initial: [0, -1] }, /^evolve\.initial\[1\]$/],
  ])('%j -> %s', (evolve, path) => fails(evolve, path));
});

describe('the ground-state solve of an evolution takes the [solve] settings', () => {
  // A Lanczos run with a Krylov space of m vectors holds those m vectors besides a few work
  // vectors (common practice), so solve.krylov sizes the ground-state part of the estimate.
  it('sizes its memory estimate with solve.krylov', () => {
    const raw = (krylov?: number): Record<string, any> =>
      clean({
        chain: { sites: 4 },
        levels: { count: 3 },
        ...(krylov ? { solve: { krylov } } : {}),
        evolve: { initial: { ground_state: {} }, times: [0, 1], tolerance: 1e-9 },
      });
    const planned = (krylov?: number) => {
      const tree = raw(krylov);
      return planEvolution(tree, validateSpec(tree));
    };
    const plan = planned(60);
    const vector = 2 * plan.dimension * 8;
    expect(plan.dimension).toBe(81);
    expect(plan.memory.parts.ground).toBe((60 + 3 + 2) * vector);
    expect(runEvolution(plan).frames[0].observables.return_probability).toBeCloseTo(1, 8);
  });
});
