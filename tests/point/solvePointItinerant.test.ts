import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { planPoint, solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { clean, randomPinnedSpec } from '../support/random.js';
import { runCli } from '../support/cli.js';

const solve = (raw: Record<string, unknown>) => solvePoint(validateSpec(raw)).record;

/** Sum of the Np lowest of the given single-particle energies (filling a Fermi sea). */
function fill(energies: number[], Np: number): number {
  return [...energies]
    .sort((a, b) => a - b)
    .slice(0, Np)
    .reduce((a, b) => a + b, 0);
}

describe('hard-core bosons at one particle per site reproduce the pinned model', () => {
  // With Np = L and t = 0 a hard-core particle can never leave its site, so the Fock space is the
  // pinned space and every term of docs/model.md acts identically (docs/model.md's particle kinds).
  for (const [seed, L, N] of [
    [61, 4, 3],
    [62, 5, 2],
    [63, 3, 4],
  ]) {
    it(`seed ${seed}: L=${L} N=${N}, energies and every pinned observable`, () => {
      const raw = clean(randomPinnedSpec(seed, L, N));
      const pinned = solve({ ...raw, solve: { states: 4, tolerance: 1e-11 } });
      const hardcore = solve({ ...raw, particles: { kind: 'hardcore' }, solve: { states: 4, tolerance: 1e-11 } });
      expect(hardcore.basis.dimension).toBe(N ** L);
      pinned.energies.forEach((e, k) => expect(hardcore.energies[k]).toBeCloseTo(e, 10));
      expect(hardcore.solver.degeneracy).toBe(pinned.solver.degeneracy);
      const a = pinned.observables;
      const b = hardcore.observables;
      expect(b.string_width).toBeCloseTo(a.string_width, 9);
      for (let i = 0; i < L; i++) {
        expect(b.level_mean[i]).toBeCloseTo(a.level_mean[i], 9);
        expect(b.spread[i]).toBeCloseTo(a.spread[i], 9);
        for (let n = 0; n < N; n++) expect(b.populations[i][n]).toBeCloseTo(a.populations[i][n], 9);
        for (let j = 0; j < L; j++) expect(b.pair_separation[i][j]).toBeCloseTo(a.pair_separation[i][j], 9);
      }
    });
  }
});

describe('soft-core bosons', () => {
  // Two bosons on two sites, basis |2,0>, |1,1>, |0,2>: E0 = (U - sqrt(U^2 + 16 t^2)) / 2
  // (the textbook two-site Bose-Hubbard result).
  it.each([
    [0, 1],
    [1.3, 0.7],
    [4, 1],
    [10, 0.5],
  ])('two bosons on two sites, U=%f t=%f: E0 = (U - sqrt(U^2 + 16 t^2))/2', (U, t) => {
    const r = solve({
      chain: { sites: 2 },
      levels: { count: 1 },
      particles: { kind: 'boson', number: 2, hopping: t, onsite: U },
    });
    expect(r.basis.dimension).toBe(3);
    expect(r.energies[0]).toBeCloseTo((U - Math.sqrt(U * U + 16 * t * t)) / 2, 12);
  });

  // Without interactions bosons all take the lowest orbital: E0 = Np (-2t) on a ring (ideal Bose gas).
  it('free bosons on a ring: E0 = -2 t Np', () => {
    const r = solve({
      chain: { sites: 5, boundary: 'periodic' },
      levels: { count: 1 },
      particles: { kind: 'boson', number: 4, hopping: 0.9 },
    });
    expect(r.energies[0]).toBeCloseTo(-2 * 0.9 * 4, 11);
  });
});

describe('free fermions and hard-core bosons on a ring', () => {
  // Free fermions on a ring of L sites: single-particle energies -2t cos(2 pi k / L), k integer; the
  // ground energy fills the lowest Np (textbook tight binding). Hard-core bosons map to fermions by
  // Jordan-Wigner, but the string across the periodic bond gives the fermions antiperiodic boundary
  // conditions when Np is even: k shifted by one half (Lieb, Schultz, Mattis, Ann. Phys. 16, 407 (1961)).
  const t = 1.1;
  const ring = (L: number, shift: number) =>
    Array.from({ length: L }, (_, k) => -2 * t * Math.cos((2 * Math.PI * (k + shift)) / L));
  const spec = (kind: string, L: number, Np: number) => ({
    chain: { sites: L, boundary: 'periodic' },
    levels: { count: 1 },
    particles: { kind, number: Np, hopping: t },
    solve: { states: 3 },
  });
  it.each([
    [8, 3],
    [8, 4],
    [9, 4],
    [10, 5],
    [7, 2],
  ])('fermions, L=%i Np=%i: E0 = sum of the lowest -2t cos(2 pi k/L)', (L, Np) => {
    expect(solve(spec('fermion', L, Np)).energies[0]).toBeCloseTo(fill(ring(L, 0), Np), 11);
  });
  it.each([
    [8, 4],
    [9, 4],
    [10, 2],
    [7, 6],
  ])('hard-core bosons, L=%i Np=%i (even): E0 = sum of the lowest -2t cos(2 pi (k+1/2)/L)', (L, Np) => {
    const e0 = solve(spec('hardcore', L, Np)).energies[0];
    expect(e0).toBeCloseTo(fill(ring(L, 0.5), Np), 11);
    expect(Math.abs(e0 - fill(ring(L, 0), Np))).toBeGreaterThan(1e-3); // the twist matters here
  });
  it.each([
    [8, 3],
    [9, 5],
  ])('hard-core bosons, L=%i Np=%i (odd): the same as fermions, k integer', (L, Np) => {
    expect(solve(spec('hardcore', L, Np)).energies[0]).toBeCloseTo(fill(ring(L, 0), Np), 11);
  });
});

describe('hard-core bosons on an open chain equal free fermions', () => {
  // Jordan-Wigner on an open chain maps hard-core bosons to spinless fermions exactly, hopping and
  // density-density terms alike (Lieb, Schultz, Mattis 1961); one level, so the diagonal dipole
  // term W mu^2 n_i n_j is such a density-density interaction.
  it('free: E0 = sum of the lowest -2t cos(pi k/(L+1)), and the low spectra coincide', () => {
    const L = 9;
    const Np = 4;
    const t = 0.8;
    const base = { chain: { sites: L }, levels: { count: 1 }, solve: { states: 6, tolerance: 1e-11 } };
    const hb = solve({ ...base, particles: { kind: 'hardcore', number: Np, hopping: t } });
    const ff = solve({ ...base, particles: { kind: 'fermion', number: Np, hopping: t } });
    const orbitals = Array.from({ length: L }, (_, k) => -2 * t * Math.cos((Math.PI * (k + 1)) / (L + 1)));
    expect(hb.energies[0]).toBeCloseTo(fill(orbitals, Np), 11);
    hb.energies.forEach((e, k) => expect(e).toBeCloseTo(ff.energies[k], 10));
  });
  it('with a nearest-neighbour and dipolar-tail density interaction: the low spectra coincide', () => {
    for (const range of ['nearest', 'dipolar']) {
      const base = {
        chain: { sites: 8 },
        levels: { count: 1, detuning: 0.3 },
        ising: { strength: 1.7, moments: [1.2], range },
        solve: { states: 6, tolerance: 1e-11 },
      };
      const hb = solve({ ...base, particles: { kind: 'hardcore', number: 3, hopping: 1 } });
      const ff = solve({ ...base, particles: { kind: 'fermion', number: 3, hopping: 1 } });
      hb.energies.forEach((e, k) => expect(e).toBeCloseTo(ff.energies[k], 10));
    }
  });
});

describe('sizing itinerant problems before building them', () => {
  it('planPoint reports the stored entries the built operator then holds', () => {
    for (const particles of [
      { kind: 'hardcore', number: 3, hopping: 1 },
      { kind: 'boson', number: 4, hopping: 1, onsite: 2, max_per_site: 2 },
      { kind: 'fermion', number: 5, hopping: 1 },
    ]) {
      const spec = validateSpec({
        chain: { sites: 5, boundary: 'periodic' },
        levels: { count: 3, detuning: [0, 0.2, 0.5] },
        exchange: { strength: 1.5, range: 'dipolar' },
        particles,
        solve: { states: 2 },
      });
      const plan = planPoint(spec);
      expect(plan.storage).toBe('stored');
      const record = solvePoint(spec).record;
      expect(record.basis.operator).toBe('stored');
      expect(record.basis.dimension).toBe(plan.dimension);
      expect(record.basis.nonzeros).toBe(plan.nonzeros);
    }
  });

  it('an explicit entanglement request for an itinerant kind is an error naming the key', () => {
    const raw = {
      chain: { sites: 4 },
      levels: { count: 2 },
      particles: { kind: 'fermion', number: 2, hopping: 1 },
      solve: { entanglement: 'half' },
    };
    expect(() => planPoint(validateSpec(raw))).toThrow(/^solve\.entanglement: .*pinned molecules only/);
    // the default ("auto") quietly computes none
    expect(solve({ ...raw, solve: {} }).observables.entanglement).toBeUndefined();
  });

  it('check reports the dimension of a 12-site, 6-particle, 3-level hard-core chain without building it', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-itinerant-'));
    const file = path.join(dir, 'hardcore.toml');
    writeFileSync(
      file,
      [
        '[chain]',
        'sites = 12',
        'boundary = "periodic"',
        '[levels]',
        'count = 3',
        '[exchange]',
        'strength = 1',
        '[particles]',
        'kind = "hardcore"',
        'number = 6',
        'hopping = 1',
      ].join('\n'),
    );
    const r = runCli(['check', file]);
    expect(r.code).toBe(0);
    // C(12, 6) 3^6 = 673596 (elementary counting)
    expect(r.stdout).toMatch(/basis dimension\s+673596/);
    expect(r.stdout).toMatch(/stored sparse matrix, \d+ nonzeros/);
  });

  it('solve --json carries the itinerant observables', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-itinerant-'));
    const file = path.join(dir, 'bosons.json');
    writeFileSync(
      file,
      JSON.stringify({
        chain: { sites: 4, boundary: 'periodic' },
        levels: { count: 2 },
        particles: { kind: 'boson', number: 3, hopping: 1, onsite: 2 },
      }),
    );
    const r = runCli(['solve', file, '--json']);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.basis.kind).toBe('boson');
    for (const k of [
      'density',
      'double_occupancy',
      'one_body_density_matrix',
      'condensate_fraction',
      'momentum_distribution',
    ]) {
      expect(out.observables).toHaveProperty(k);
    }
    expect(out.observables.density.reduce((a: number, b: number) => a + b, 0)).toBeCloseTo(3, 9);
  });
});

describe('threaded products on the stored Fock matrix', () => {
  // Splitting the rows of one product over threads changes nothing but the schedule (common practice).
  it('two threads give the energies of one, for each kind', () => {
    for (const particles of [
      { kind: 'hardcore', number: 4, hopping: 1 },
      { kind: 'boson', number: 4, hopping: 1, onsite: 1.5, max_per_site: 2 },
      { kind: 'fermion', number: 5, hopping: 1 },
    ]) {
      const raw = {
        chain: { sites: 7, boundary: 'periodic' },
        levels: { count: 2, detuning: [0, 0.3] },
        exchange: { strength: 1.2 },
        particles,
        solve: { states: 3, tolerance: 1e-10 },
      };
      const one = solve({ ...raw, solve: { ...raw.solve, threads: 1 } });
      const two = solve({ ...raw, solve: { ...raw.solve, threads: 2 } });
      one.energies.forEach((e, k) => expect(two.energies[k]).toBeCloseTo(e, 10));
    }
  });
});

// A differential run against a dense build found this chain's two-fold ground level returned once
// for one seed in about a thousand: the verification run's screen passed on a pair converged to
// 1/100 of its distance above the line while the missing copy was still hidden. Reference: the
// dense spectrum (ml-matrix) of the plain Fock build.
describe('the verification pass on a degenerate itinerant ground level', () => {
  it('soft-core bosons, seed 237: both copies of the ground level', async () => {
    const { denseFockHamiltonian, denseGround } = await import('../support/fockReference.js');
    const raw = {
      chain: { sites: 4, boundary: 'periodic' },
      levels: { count: 3, boundary: 'open' },
      exchange: { strength: 1.535836, weights: [1.7752586221055782, 0.346275] },
      ising: { strength: 1, moments: [-0.42473526841192655, 0, 0.42473526841192655], range: 'dipolar' },
      particles: {
        kind: 'boson',
        number: 2,
        max_per_site: 3,
        onsite: 2.5096643411802066,
        hopping: 0.17725603147115532,
      },
      solve: { states: 2, seed: 237, tolerance: 1e-10 },
    };
    const reference = denseGround(denseFockHamiltonian(validateSpec(raw))).values;
    expect(reference[1] - reference[0]).toBeLessThan(1e-9);
    const r = solve(raw);
    expect(r.solver.method).toBe('lanczos');
    reference.slice(0, 2).forEach((e, k) => expect(r.energies[k]).toBeCloseTo(e, 8));
  });
});
