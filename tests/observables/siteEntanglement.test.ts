// Entanglement of a subsystem given as a list of sites (solve.entanglement = [[...], ...]) on any
// geometry, against the reduced density matrix of the dense ground mixture built in
// tests/support/occupationReference.ts (siteSetEntanglement: rho_A summed over the other sites'
// levels, diagonalized by ml-matrix), on random 2D pinned specs with every term on, both symmetry
// settings, and degenerate ground levels (the equal mixture's rho_A, docs/model.md).
import { describe, expect, it } from 'vitest';
import { solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { pinnedEntanglement, pinnedSiteSetEntanglement, reorderSites } from '../../src/observables/entanglement.js';
import { SpecError } from '../../src/errors/errors.js';
import { buildDense, groundMixture, siteSetEntanglement } from '../support/occupationReference.js';
import { describeCase, randomLattice, referenceSites, type LatticeRaw } from '../support/latticeReference.js';
import { randomPinnedSpec, rng } from '../support/random.js';

const solve = (raw: Record<string, unknown>): PointRecord =>
  solvePoint(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>)).record;

interface SiteEntry {
  sites: number[];
  von_neumann: number;
  renyi_2: number;
  spectrum: number[];
}

function entriesOf(record: PointRecord): SiteEntry[] {
  const list = (record.observables as unknown as Record<string, unknown>).entanglement;
  if (!Array.isArray(list)) throw new Error(`no entanglement list: ${JSON.stringify(list)}`);
  return list as SiteEntry[];
}

const SHAPES: LatticeRaw['shape'][] = ['square', 'triangular', 'custom'];

/** A random pinned 2D spec with every term on; `degenerate`: no tunnelling or detuning, an odd site count. */
function randomCase(id: number): { spec: Record<string, any>; sites: number; subsets: number[][] } {
  const r = rng(4400 + id);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const shape = SHAPES[id % 3];
  const degenerate = id % 4 === 3;
  let lattice = randomLattice(shape, r, false);
  if (shape === 'custom') {
    // Custom arrays with a vacancy too (a removed tweezer).
    lattice = { ...lattice, vacancies: [1] };
    delete lattice.bonds;
  }
  let sites = referenceSites(lattice).xyz.length;
  // With the level flip unbroken, an odd site count pairs charges q and L - q: a degenerate ground level.
  if (degenerate && sites % 2 === 0) {
    // One vacancy more or less makes the count odd.
    lattice.vacancies = (lattice.vacancies?.length ?? 0) > 0 ? [] : [0];
    sites = referenceSites(lattice).xyz.length;
  }
  const N = sites <= 4 && !degenerate ? 3 : 2;
  const links = N - 1;
  const spec: Record<string, any> = {
    lattice,
    levels: {
      count: N,
      tunnelling: Array.from({ length: links }, () => (degenerate ? 0 : u(0.2, 1.2))),
      phase: Array.from({ length: links }, () => (degenerate ? 0 : u(-Math.PI, Math.PI))),
      detuning: Array.from({ length: N }, () => (degenerate ? 0 : u(-0.8, 0.8))),
    },
    exchange: { strength: u(-1.5, 1.5), range: r() < 0.5 ? 'dipolar' : 'nearest' },
    ising: {
      strength: u(-1, 1),
      moments: Array.from({ length: N }, (_, n) => (degenerate ? n - (N - 1) / 2 : u(-1, 1))),
      range: r() < 0.5 ? 'dipolar' : 'nearest',
    },
    solve: { states: 2, symmetries: id % 2 === 0 ? 'auto' : 'none', tolerance: 1e-11 },
  };
  // Random proper subsets and their complements.
  const subsets: number[][] = [];
  for (let k = 0; k < 2; k++) {
    let a: number[] = [];
    while (a.length === 0 || a.length === sites) a = Array.from({ length: sites }, (_, i) => i).filter(() => r() < 0.5);
    const shuffled = [...a].sort(() => r() - 0.5);
    subsets.push(
      shuffled,
      Array.from({ length: sites }, (_, i) => i).filter((i) => !a.includes(i)),
    );
  }
  return { spec, sites, subsets };
}

describe('entanglement of site lists on 2D arrays against the dense reduced density matrix (ml-matrix)', () => {
  const cases = Array.from({ length: 12 }, (_, id) => [id, randomCase(id)] as const);
  it.each(cases)('case %i', (id, c) => {
    const spec = { ...c.spec, solve: { ...c.spec.solve, entanglement: c.subsets } };
    const model = describeCase(spec, 'pinned');
    const h = buildDense(model);
    const g = groundMixture(h, spec.solve.tolerance as number);
    const record = solve(spec);
    expect(record.solver.degeneracy).toBe(g.degeneracy);
    if (id % 4 === 3) expect(g.degeneracy).toBeGreaterThan(1);
    const got = entriesOf(record);
    expect(got.map((e) => e.sites)).toEqual(c.subsets);
    // The ground vector's error is of order tolerance / gap above the ground level.
    const above = g.values[g.degeneracy] ?? Infinity;
    const tol = 1e-7 + (1e-9 * 100) / Math.max(above - g.values[0], 1e-3);
    got.forEach((entry, k) => {
      const ref = siteSetEntanglement(model, h, g, c.subsets[k]);
      expect(Math.abs(entry.von_neumann - ref.von_neumann), `S of ${entry.sites.join(',')}`).toBeLessThan(tol);
      expect(Math.abs(entry.renyi_2 - ref.renyi_2)).toBeLessThan(tol);
      // Entanglement energies -ln(lambda): compare those of weights well above the rounding floor.
      ref.spectrum.forEach((x, j) => {
        if (x < 20) expect(Math.abs(entry.spectrum[j] - x)).toBeLessThan(tol * Math.exp(x));
      });
    });
    if (g.degeneracy > 1) {
      // An equal mixture is not pure: A and its complement differ (the reference shows the same split).
      const refA = siteSetEntanglement(model, h, g, c.subsets[0]);
      const refB = siteSetEntanglement(model, h, g, c.subsets[1]);
      expect(Math.abs(refA.von_neumann - refB.von_neumann)).toBeGreaterThan(1e-3);
      expect(Math.abs(got[0].von_neumann - got[1].von_neumann)).toBeGreaterThan(1e-3);
    } else {
      // A pure state: A and its complement share their spectrum (Schmidt decomposition, common practice).
      expect(Math.abs(got[0].von_neumann - got[1].von_neumann)).toBeLessThan(tol);
    }
  });
});

describe('a chain: the site list 0..l-1 is the cut l', () => {
  it.each([1, 2, 3, 4, 5, 6])('random pinned chain %i, through the solve and directly, to 1e-12', (seed) => {
    const L = 3 + (seed % 4);
    const raw = randomPinnedSpec(7100 + seed, L, 2 + (seed % 2));
    for (const cut of [1, Math.floor(L / 2), L - 1]) {
      const byCut = solve({ ...raw, solve: { ...raw.solve, states: 2, entanglement: [cut] } });
      const bySites = solve({
        ...raw,
        solve: { ...raw.solve, states: 2, entanglement: [Array.from({ length: cut }, (_, i) => i)] },
      });
      const a = entriesOf(byCut)[0] as unknown as { cut: number } & SiteEntry;
      const b = entriesOf(bySites)[0];
      expect(a.cut).toBe(cut);
      expect(b.sites).toEqual(Array.from({ length: cut }, (_, i) => i));
      expect(Math.abs(a.von_neumann - b.von_neumann)).toBeLessThan(1e-12);
      expect(Math.abs(a.renyi_2 - b.renyi_2)).toBeLessThan(1e-12);
      a.spectrum.forEach((x, j) => expect(Math.abs(x - b.spectrum[j])).toBeLessThan(1e-12));
    }
  });

  it('reordering the digits keeps the state: a reordered site list gives the same entropies as its cut', () => {
    // A random normalized complex state of 4 sites x 3 levels: A = {2, 0} is the cut 2 of the state
    // with sites 0 and 2 moved to the front (common practice: entropies depend on the set only).
    const r = rng(5);
    const dim = 81;
    const psi = new Float64Array(2 * dim).map(() => r() - 0.5);
    let norm = 0;
    for (const x of psi) norm += x * x;
    psi.forEach((x, k) => (psi[k] = x / Math.sqrt(norm)));
    const swapped = new Float64Array(2 * dim);
    // Site order (0, 2, 1, 3) written out by hand (A's sites ascending, then the rest): the digit of
    // new site 1 is old site 2's, of new site 2 old site 1's.
    for (let s = 0; s < dim; s++) {
      const d = [s % 3, Math.floor(s / 3) % 3, Math.floor(s / 9) % 3, Math.floor(s / 27) % 3];
      const t = d[0] + d[2] * 3 + d[1] * 9 + d[3] * 27;
      swapped[2 * t] = psi[2 * s];
      swapped[2 * t + 1] = psi[2 * s + 1];
    }
    expect(Array.from(reorderSites(psi, 4, 3, true, [2, 0]))).toEqual(Array.from(swapped));
    const viaCut = pinnedEntanglement([swapped], 4, 3, true, [2])[0];
    const viaSites = pinnedSiteSetEntanglement([psi], 4, 3, true, [[2, 0]])[0];
    expect(viaSites.von_neumann).toBe(viaCut.von_neumann);
    expect(viaSites.sites).toEqual([2, 0]);
  });
});

describe('bad site lists name solve.entanglement and the site', () => {
  const base = { lattice: { shape: 'square', size: [2, 3] }, levels: { count: 2 } };
  const fails = (entanglement: unknown, path: string, message: RegExp) => {
    let error: unknown;
    try {
      validateSpec({ ...base, solve: { entanglement } });
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(SpecError);
    expect((error as SpecError).message).toMatch(new RegExp(`^${path.replace(/[[\].]/g, '\\$&')}: `));
    expect((error as SpecError).message).toMatch(message);
  };
  it('a site outside the array, a repeated site, an empty list, every site, a number among lists', () => {
    fails([[0, 6]], 'solve.entanglement[0][1]', /from 0 to 5, got 6/);
    fails([[0], [1, 1]], 'solve.entanglement[1][1]', /site 1 is listed twice/);
    fails([[]], 'solve.entanglement[0]', /at least one site/);
    fails([[0, 1, 2, 3, 4, 5]], 'solve.entanglement[0]', /leave at least one site outside/);
    fails([[0], 2], 'solve.entanglement[1]', /expected a list of sites/);
    fails([[0.5]], 'solve.entanglement[0][0]', /got 0.5/);
  });
  it('itinerant kinds have no entanglement: an error naming solve.entanglement', () => {
    expect(() =>
      solve({ ...base, particles: { kind: 'hardcore', number: 2, hopping: 1 }, solve: { entanglement: [[0, 1]] } }),
    ).toThrow(/^solve\.entanglement: .*pinned molecules only/);
  });
});
