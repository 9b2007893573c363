// Differential fuzz of the ground space against the plain dense build of docs/model.md in
// tests/support/occupationReference.ts (ml-matrix's dense eigensolver): random small specs of every
// particle kind, deliberately degenerate (free molecules, H = 0, rings threaded by flux, symmetric
// couplings, charge-conserving chains) or generic with every term on, both symmetry settings,
// solve.states 1..4. Checked: the ground level's multiplicity (the documented window), the energies,
// every observable of the ground space's equal mixture, the entanglement of the sites left of every
// cut (pinned), and the evolve trace's observables against exp(-i H t) by the dense spectral
// decomposition. FUZZ_CASES (default 80) and FUZZ_SEED choose the run; FUZZ_MAX_DIM the largest space.

import { writeFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { planEvolution, runEvolution, traceJson } from '../../src/dynamics/evolution.js';
import { solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import { SpecError } from '../../src/errors/errors.js';
import { validateSpec } from '../../src/spec/spec.js';
import {
  buildDense,
  energyOf,
  evolveDense,
  groundMixture,
  levelWindow,
  leftEntanglement,
  observablesFrom,
  type Kind,
  type ModelDescription,
} from '../support/occupationReference.js';
import { rng } from '../support/random.js';

const CASES = Number(process.env.FUZZ_CASES ?? 80);
const SEED = Number(process.env.FUZZ_SEED ?? 20261204);
const MAX_DIM = Number(process.env.FUZZ_MAX_DIM ?? 260);
const MIN_DIM = Number(process.env.FUZZ_MIN_DIM ?? 1);
/** Real Hamiltonians only (phases 0 or pi), whose dense reference is four times cheaper per dimension. */
const REAL_ONLY = process.env.FUZZ_REAL === '1';

const CATEGORIES = ['generic', 'free', 'zero', 'ringflux', 'symmetric', 'charge'] as const;
type Category = (typeof CATEGORIES)[number];
const ONLY_CATEGORY = process.env.FUZZ_CATEGORY as Category | undefined;
const ONLY_KIND = process.env.FUZZ_KIND as Kind | undefined;

function rotor(n: number): number {
  return (3 * (n + 1) ** 2) / ((2 * n + 1) * (2 * n + 3));
}

function countStates(m: ModelDescription): number {
  // Cheap count by dynamic programming over sites: ways[k] to place k particles so far.
  const N = m.levels;
  const perSite: number[] = []; // perSite[c]: local states holding c particles
  const binom = (n: number, k: number) => {
    let r = 1;
    for (let q = 0; q < k; q++) r = (r * (n - q)) / (q + 1);
    return Math.round(r);
  };
  const maxC = m.kind === 'boson' ? m.maxPerSite : m.kind === 'fermion' ? N : 1;
  for (let c = 0; c <= maxC; c++) {
    if (m.kind === 'pinned') perSite.push(c === 1 ? N : 0);
    else if (m.kind === 'fermion') perSite.push(binom(N, c));
    else perSite.push(binom(N + c - 1, c)); // bosons: multisets of c levels
  }
  if (m.kind === 'pinned') perSite[0] = 0;
  let ways = [1];
  for (let i = 0; i < m.sites; i++) {
    const next = new Array<number>(ways.length + maxC).fill(0);
    ways.forEach((w, k) => perSite.forEach((p, c) => (next[k + c] += w * p)));
    ways = next;
  }
  return ways[m.particles] ?? 0;
}

interface Case {
  id: number;
  category: Category;
  model: ModelDescription;
  spec: Record<string, unknown>;
  symmetries: 'auto' | 'none' | string[];
  states: number;
  tolerance: number;
  evolve: boolean;
}

function randomCase(id: number, r: () => number): Case | null {
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const q = () => pick([0.5, 1, -1, 2, 0.25]);
  const category = ONLY_CATEGORY ?? pick(CATEGORIES);
  const kind: Kind = ONLY_KIND ?? (r() < 0.5 ? 'pinned' : pick(['hardcore', 'boson', 'fermion'] as const));
  const N = category === 'ringflux' ? pick([3, 3, 4, 5]) : pick([2, 2, 3, 3, 4, 5]);
  const L = kind === 'pinned' ? pick([2, 3, 3, 4, 4, 5, 6, 7, 8]) : pick([2, 3, 3, 4, 4, 5]);
  const particles = kind === 'pinned' ? L : 1 + Math.floor(r() * (kind === 'fermion' ? Math.min(L * N - 1, L + 1) : L));
  const maxPerSite = kind === 'boson' ? pick([1, 2, particles]) : 1;
  const ring = N >= 3 && (category === 'ringflux' || r() < 0.3);
  const periodic = L >= 3 && (category === 'symmetric' ? r() < 0.7 : r() < 0.4);
  const links = ring ? N : N - 1;
  const perLink = (f: () => number) => Array.from({ length: links }, f);
  const perLevel = (f: () => number) => Array.from({ length: N }, f);
  let tunnelling: number[];
  let phase: number[];
  let detuning: number[];
  let exchange = 0;
  let weights = Array.from({ length: N - 1 }, () => 1);
  let weightsSpec: unknown = 'uniform';
  let ising = 0;
  let moments = perLevel(() => 0);
  let hopping = 0;
  let onsite = 0;
  const exchangeRange = r() < 0.6 ? 'nearest' : 'dipolar';
  const exchangeCutoff = exchangeRange === 'dipolar' && r() < 0.4 ? 2 : null;
  const isingRange = r() < 0.6 ? 'nearest' : 'dipolar';
  const isingCutoff = isingRange === 'dipolar' && r() < 0.4 ? 2 : null;
  switch (category) {
    case 'generic':
      tunnelling = perLink(() => u(0.2, 1.5));
      phase = perLink(() => (r() < 0.5 ? 0 : u(-Math.PI, Math.PI)));
      detuning = perLevel(() => u(-1, 1));
      exchange = u(-2, 2);
      if (r() < 0.5) {
        weightsSpec = 'rotor';
        weights = weights.map((_, n) => rotor(n));
      } else {
        weights = weights.map(() => u(0.5, 1.5));
        weightsSpec = weights;
      }
      ising = u(-1, 1);
      moments = perLevel(() => u(-1, 1));
      hopping = kind === 'pinned' ? 0 : u(-1.5, 1.5);
      onsite = kind === 'boson' ? u(-1, 3) : 0;
      break;
    case 'free':
      tunnelling = perLink(() => (r() < 0.3 ? 0 : q()));
      phase = perLink(() => (r() < 0.7 ? 0 : pick([Math.PI, Math.PI / 2, Math.PI / 3])));
      detuning = perLevel(() => (r() < 0.5 ? 0 : q()));
      onsite = kind === 'boson' && r() < 0.5 ? q() : 0;
      break;
    case 'zero':
      tunnelling = perLink(() => 0);
      phase = perLink(() => 0);
      detuning = perLevel(() => 0);
      break;
    case 'ringflux': {
      const J = q();
      const flux = pick([Math.PI / 3, Math.PI / 2, (2 * Math.PI) / 3]);
      tunnelling = perLink(() => J);
      phase = perLink(() => flux);
      detuning = perLevel(() => 0);
      if (r() < 0.5) exchange = q();
      if (r() < 0.3) {
        ising = q();
        moments = perLevel(() => q());
      }
      hopping = kind !== 'pinned' && r() < 0.5 ? q() : 0;
      break;
    }
    case 'symmetric': {
      // Level-flip symmetric ladder (J_l = J_{N-2-l}, Delta_n = Delta_{N-1-n}, moments odd), uniform chain.
      const half = perLink(() => q());
      tunnelling = ring ? perLink(() => half[0]) : half.map((_, l) => half[Math.min(l, links - 1 - l)]);
      phase = perLink(() => (r() < 0.8 ? 0 : Math.PI));
      const d = perLevel(() => (r() < 0.5 ? 0 : q()));
      detuning = d.map((_, n) => d[Math.min(n, N - 1 - n)]);
      exchange = r() < 0.8 ? q() : 0;
      if (r() < 0.4) {
        ising = q();
        const mu = perLevel(() => q());
        moments = mu.map((_, n) => (n < N - 1 - n ? mu[n] : n > N - 1 - n ? -mu[N - 1 - n] : 0));
      }
      hopping = kind !== 'pinned' && r() < 0.6 ? q() : 0;
      onsite = kind === 'boson' && r() < 0.5 ? q() : 0;
      break;
    }
    case 'charge':
      tunnelling = perLink(() => 0);
      phase = perLink(() => 0);
      detuning = perLevel(() => (r() < 0.5 ? 0 : q()));
      exchange = r() < 0.5 ? q() : u(-2, 2);
      if (r() < 0.5) {
        weightsSpec = 'rotor';
        weights = weights.map((_, n) => rotor(n));
      }
      if (r() < 0.5) {
        ising = q();
        moments = perLevel(() => q());
      }
      hopping = kind !== 'pinned' && r() < 0.5 ? q() : 0;
      onsite = kind === 'boson' && r() < 0.5 ? q() : 0;
      break;
  }
  if (REAL_ONLY) phase = phase.map((x) => (Math.abs(x) < 1e-12 ? 0 : Math.PI));
  const model: ModelDescription = {
    sites: L,
    periodic,
    levels: N,
    ring,
    tunnelling,
    phase,
    detuning,
    exchange,
    exchangeRange,
    exchangeCutoff,
    weights,
    ising,
    moments,
    isingRange,
    isingCutoff,
    kind,
    particles,
    hopping,
    maxPerSite: kind === 'boson' ? maxPerSite : 1,
    onsite,
  };
  const dim = countStates(model);
  if (dim < MIN_DIM || dim > MAX_DIM || dim === 0) return null;
  const states = 1 + Math.floor(r() * 4);
  const tolerance = r() < 0.5 ? 1e-9 : 1e-10;
  // A single named symmetry gives larger sectors than "auto" (more of them solved by Lanczos); one the
  // model lacks is refused, and the case falls back to "auto".
  const symmetries =
    r() < 0.4 ? 'auto' : r() < 0.6 ? 'none' : [pick(['charge', 'translation', 'reflection', 'level_flip'])];
  const particlesSpec: Record<string, unknown> = { kind };
  if (kind !== 'pinned') {
    particlesSpec.number = particles;
    particlesSpec.hopping = hopping;
    if (kind === 'boson') {
      particlesSpec.max_per_site = maxPerSite;
      particlesSpec.onsite = onsite;
    }
  }
  const spec: Record<string, unknown> = {
    chain: { sites: L, boundary: periodic ? 'periodic' : 'open' },
    levels: { count: N, boundary: ring ? 'ring' : 'open', tunnelling, phase, detuning },
    exchange: {
      strength: exchange,
      range: exchangeRange,
      ...(exchangeCutoff !== null ? { cutoff: exchangeCutoff } : {}),
      weights: weightsSpec,
    },
    ising: { strength: ising, moments, range: isingRange, ...(isingCutoff !== null ? { cutoff: isingCutoff } : {}) },
    particles: particlesSpec,
    solve: {
      states,
      tolerance,
      seed: Math.floor(r() * 1000),
      symmetries,
      ...(kind === 'pinned' ? { entanglement: 'all' } : {}),
    },
  };
  return { id, category, model, spec, symmetries, states, tolerance, evolve: r() < 0.25 };
}

interface Failure {
  id: number;
  category: Category;
  what: string;
  spec: Record<string, unknown>;
}

function maxDiff(a: unknown, b: unknown): number {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b);
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return Infinity;
    return a.reduce((m: number, x, k) => Math.max(m, maxDiff(x, b[k])), 0);
  }
  return Infinity;
}

function checkCase(c: Case, failures: Failure[], tally: Record<string, number>): void {
  const fail = (what: string) => failures.push({ id: c.id, category: c.category, what, spec: c.spec });
  const h = buildDense(c.model);
  const g = groundMixture(h, c.tolerance);
  let record: PointRecord;
  // Every third case starts from one of its own ground states, as a scan's warm start does when a
  // step leaves the ground space unchanged: the Krylov space from an eigenvector is invariant at once.
  const warm = c.id % 3 === 0;
  const solve = () => {
    const first = solvePoint(validateSpec(JSON.parse(JSON.stringify(c.spec))), { groundStates: true });
    if (!warm || first.groundStates.length === 0) return first.record;
    return solvePoint(validateSpec(JSON.parse(JSON.stringify(c.spec))), {
      groundStates: true,
      initial: first.groundStates[0],
    }).record;
  };
  try {
    try {
      record = solve();
    } catch (e) {
      if (!(e instanceof SpecError && e.keyPath === 'solve.symmetries' && Array.isArray(c.symmetries))) throw e;
      c.symmetries = 'auto';
      (c.spec.solve as Record<string, unknown>).symmetries = 'auto';
      record = solve();
    }
  } catch (e) {
    fail(`threw: ${(e as Error).message}`);
    return;
  }
  const key = `${c.category}/${c.model.kind}/${String(c.symmetries)}/${record.solver.method}${warm ? '/warm' : ''}`;
  tally[key] = (tally[key] ?? 0) + 1;
  if (record.basis.dimension !== h.dim) {
    fail(`dimension ${record.basis.dimension}, dense ${h.dim}`);
    return;
  }
  if (!record.solver.converged) {
    fail('not converged');
    return;
  }
  const e0 = g.values[0];
  const wanted = Math.min(c.states, h.dim);
  const energyGap = maxDiff(record.energies, g.values.slice(0, wanted));
  if (!(energyGap <= 1e-8 * Math.max(1, Math.abs(e0))))
    fail(`energies ${JSON.stringify(record.energies)} dense ${JSON.stringify(g.values.slice(0, wanted))}`);
  const complete = record.solver.degeneracy_complete;
  if (!complete) {
    tally.incomplete = (tally.incomplete ?? 0) + 1;
    if (record.solver.degeneracy > g.degeneracy)
      fail(`incomplete degeneracy ${record.solver.degeneracy} above dense ${g.degeneracy}`);
    if (g.degeneracy <= 64) fail(`incomplete at dense degeneracy ${g.degeneracy} (${record.solver.method})`);
    return;
  }
  if (record.solver.degeneracy !== g.degeneracy) {
    fail(`degeneracy ${record.solver.degeneracy}, dense ${g.degeneracy} (${record.solver.method})`);
    return;
  }
  // Eigenvectors converge to r / gap: the observables of a level with a close neighbour less so.
  const above = g.values[g.degeneracy] ?? Infinity;
  const tol = 1e-8 + (100 * c.tolerance * c.model.levels ** 2) / Math.max(above - e0, 1e-6);
  const D = h.dim;
  const p = new Float64Array(D);
  for (let s = 0; s < D; s++) p[s] = g.projectorRe[s * D + s] / g.degeneracy;
  const ref = observablesFrom(c.model, h.configs, p);
  const got = record.observables as unknown as Record<string, unknown>;
  const names: (keyof typeof ref)[] = ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'];
  if (c.model.kind !== 'pinned') names.push('density', 'double_occupancy');
  for (const name of names) {
    let value = got[name];
    if (name === 'pair_separation' && c.model.kind !== 'pinned') {
      // The diagonal of an itinerant chain's pair_separation is not fixed by the page.
      value = (value as number[][]).map((row, i) => row.map((x, j) => (i === j ? 0 : x)));
    }
    const d = maxDiff(value, ref[name]);
    if (!(d <= tol))
      fail(
        `${name} off by ${d} (tol ${tol}, g ${g.degeneracy}): got ${JSON.stringify(value)} dense ${JSON.stringify(ref[name])}`,
      );
  }
  if (c.model.kind === 'pinned') {
    const cuts = (got.entanglement ?? []) as {
      cut: number;
      von_neumann: number;
      renyi_2: number;
      spectrum: number[];
    }[];
    if (cuts.length !== c.model.sites - 1 && g.degeneracy <= 64)
      fail(`entanglement has ${cuts.length} cuts, wanted ${c.model.sites - 1}`);
    for (const cut of cuts) {
      const dL = c.model.levels ** cut.cut;
      if (dL * (h.real ? 1 : 2) > 300) continue;
      const e = leftEntanglement(c.model, h, g, cut.cut);
      const ent = 10 * tol;
      if (!(Math.abs(e.von_neumann - cut.von_neumann) <= ent))
        fail(`von_neumann at cut ${cut.cut}: ${cut.von_neumann}, dense ${e.von_neumann} (g ${g.degeneracy})`);
      if (!(Math.abs(e.renyi_2 - cut.renyi_2) <= ent))
        fail(`renyi_2 at cut ${cut.cut}: ${cut.renyi_2}, dense ${e.renyi_2} (g ${g.degeneracy})`);
      // Entanglement energies: only well-resolved weights (above e^-12) are compared.
      const well = e.spectrum.filter((x) => x < 12);
      const mine = cut.spectrum.filter((x) => x < 12);
      if (well.length !== mine.length || maxDiff(well, mine) > 1e-5)
        fail(`spectrum at cut ${cut.cut}: ${JSON.stringify(cut.spectrum)}, dense ${JSON.stringify(e.spectrum)}`);
      tally.cuts = (tally.cuts ?? 0) + 1;
    }
  }
  if (c.evolve) checkEvolve(c, h, g, fail, tally);
}

function checkEvolve(
  c: Case,
  h: ReturnType<typeof buildDense>,
  g: ReturnType<typeof groundMixture>,
  fail: (w: string) => void,
  tally: Record<string, number>,
): void {
  const L = c.model.sites;
  const N = c.model.levels;
  const r = rng(c.id * 7919 + 17);
  if (c.model.kind === 'boson' && c.model.particles > L) return;
  if (c.model.kind === 'fermion' && c.model.particles > L) return;
  const sites = Array.from({ length: L }, (_, i) => i)
    .sort(() => r() - 0.5)
    .slice(0, c.model.particles);
  const levels = Array.from({ length: L }, (_, i) => (sites.includes(i) ? Math.floor(r() * N) : -1));
  const times = [0, 0.37, 1.3];
  const raw = JSON.parse(JSON.stringify(c.spec));
  delete raw.solve.entanglement;
  raw.evolve = { initial: levels, times, tolerance: 1e-10 };
  let trace: { times: number[]; observables: Record<string, unknown[]> };
  try {
    trace = traceJson(runEvolution(planEvolution(raw, validateSpec(raw))));
  } catch (e) {
    fail(`evolve threw: ${(e as Error).message}`);
    return;
  }
  const start = h.configs.findIndex((occ) =>
    levels.every((n, i) => (n < 0 ? occ.slice(i * N, i * N + N).every((k) => k === 0) : occ[i * N + n] === 1)),
  );
  const re0 = new Float64Array(h.dim);
  const im0 = new Float64Array(h.dim);
  re0[start] = 1;
  times.forEach((t, k) => {
    const psi = evolveDense(h, g, re0, im0, t);
    const p = psi.re.map((x, s) => x * x + psi.im[s] * psi.im[s]);
    const ref = observablesFrom(c.model, h.configs, p) as unknown as Record<string, unknown>;
    ref.return_probability = psi.re[start] ** 2 + psi.im[start] ** 2;
    ref.energy = energyOf(h, psi.re, psi.im);
    ref.norm = Math.sqrt(p.reduce((a, b) => a + b, 0));
    const names = [
      'populations',
      'level_mean',
      'spread',
      'string_width',
      'pair_separation',
      'return_probability',
      'energy',
      'norm',
    ];
    if (c.model.kind !== 'pinned') names.push('density', 'double_occupancy');
    for (const name of names) {
      const series = trace.observables[name];
      if (!series) {
        fail(`evolve trace has no ${name}`);
        continue;
      }
      let value = series[k];
      if (name === 'pair_separation' && c.model.kind !== 'pinned')
        value = (value as number[][]).map((row, i) => row.map((x, j) => (i === j ? 0 : x)));
      const d = maxDiff(value, ref[name]);
      if (!(d <= 1e-7 * Math.max(1, N * N)))
        fail(`evolve ${name} at t = ${t} off by ${d}: got ${JSON.stringify(value)} dense ${JSON.stringify(ref[name])}`);
    }
  });
  tally.evolve = (tally.evolve ?? 0) + 1;
}

describe('ground space differential fuzz against a dense build of docs/model.md', () => {
  it(
    `${CASES} random small specs (seed ${SEED})`,
    () => {
      const r = rng(SEED);
      const failures: Failure[] = [];
      const tally: Record<string, number> = {};
      let made = 0;
      let id = 0;
      while (made < CASES) {
        const c = randomCase(SEED * 100000 + id++, r);
        if (!c) continue;
        made++;
        checkCase(c, failures, tally);
      }
      if (process.env.FUZZ_REPORT) writeFileSync(process.env.FUZZ_REPORT, JSON.stringify({ tally, failures }, null, 1));
      expect(failures.map((f) => `#${f.id} ${f.category}: ${f.what}\n  ${JSON.stringify(f.spec)}`)).toEqual([]);
    },
    Math.max(120_000, CASES * 5_000),
  );
});

// Spaces above the dense fallback (1024 vector numbers), where the full-space search for copies is
// Lanczos deflation alone, checked against closed forms instead of a dense solve:
// - a diagonal H (no tunnelling, no exchange): the spectrum is the diagonal, the ground space the
//   configurations of least energy, its mixture uniform over them; the left block's reduced density
//   matrix is diagonal with weights (configurations with that left part) / g;
// - free molecules (no pair terms): the ground space is the product of each site's d-fold level, so
//   g = d^L, its mixture the product of the sites' mixtures P1/d: populations P1[n][n]/d, pair
//   separation 2 spread, string width (1 - 1/L) spread, and every cut's entropies l ln d.
const LARGE = Number(process.env.FUZZ_LARGE ?? 8);

function largeCase(r: () => number): { spec: Record<string, any>; L: number; N: number; diagonal: boolean } {
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const q = () => pick([0.5, 1, -1, 2, 0.25, 0]);
  const [L, N] = pick([
    [11, 2],
    [7, 3],
    [6, 4],
    [5, 5],
    [12, 2],
  ] as const);
  const diagonal = r() < 0.5;
  const ring = N >= 3 && !diagonal && r() < 0.5;
  const links = ring ? N : N - 1;
  const levels: Record<string, unknown> = { count: N, boundary: ring ? 'ring' : 'open' };
  const spec: Record<string, any> = { chain: { sites: L, boundary: r() < 0.5 ? 'periodic' : 'open' }, levels };
  if (diagonal) {
    levels.tunnelling = 0;
    levels.detuning = Array.from({ length: N }, q);
    spec.ising = {
      strength: pick([1, -1, 0.5]),
      moments: Array.from({ length: N }, q),
      range: r() < 0.5 ? 'nearest' : 'dipolar',
    };
  } else {
    const J = pick([1, 0.5, 0]);
    levels.tunnelling = Array.from({ length: links }, () => (r() < 0.8 ? J : q()));
    levels.phase = ring
      ? Array.from({ length: links }, () => pick([Math.PI / 3, Math.PI / 2, (2 * Math.PI) / 3, 0]))
      : 0;
    levels.detuning = Array.from({ length: N }, () => (r() < 0.6 ? 0 : q()));
  }
  spec.solve = {
    states: 1 + Math.floor(r() * 4),
    symmetries: r() < 0.5 ? 'auto' : 'none',
    entanglement: 'all',
    seed: Math.floor(r() * 1000),
  };
  return { spec, L, N, diagonal };
}

function siteHamiltonian(spec: Record<string, any>, N: number): { re: number[][]; im: number[][] } {
  const lv = spec.levels;
  const ring = lv.boundary === 'ring';
  const links = ring ? N : N - 1;
  const per = (x: unknown, n: number) =>
    Array.isArray(x) ? (x as number[]) : Array.from({ length: n }, () => (x as number) ?? 0);
  const J = per(lv.tunnelling, links);
  const phi = per(lv.phase ?? 0, links);
  const delta = per(lv.detuning, N);
  const re = Array.from({ length: N }, (_, a) => Array.from({ length: N }, (_, b) => (a === b ? delta[a] : 0)));
  const im = Array.from({ length: N }, () => new Array<number>(N).fill(0));
  for (let l = 0; l < links; l++) {
    const to = (l + 1) % N;
    re[to][l] += -J[l] * Math.cos(phi[l]);
    im[to][l] += -J[l] * Math.sin(phi[l]);
    re[l][to] += -J[l] * Math.cos(phi[l]);
    im[l][to] -= -J[l] * Math.sin(phi[l]);
  }
  return { re, im };
}

describe('large structured spaces (Lanczos only) against closed forms', () => {
  it(
    `${LARGE} diagonal or free-molecule chains above the dense fallback (seed ${SEED})`,
    () => {
      const r = rng(SEED + 99);
      const failures: string[] = [];
      const tally: Record<string, number> = {};
      for (let c = 0; c < LARGE; c++) {
        const { spec, L, N, diagonal } = largeCase(r);
        const fail = (what: string) => failures.push(`${what}\n  ${JSON.stringify(spec)}`);
        const record = solvePoint(validateSpec(JSON.parse(JSON.stringify(spec)))).record;
        const tolerance = 1e-9;
        const D = N ** L;
        let g: number;
        let energies: number[];
        let ref: ReturnType<typeof observablesFrom> | null;
        let entropy: (cut: number) => { vn: number; r2: number };
        const model = { sites: L, levels: N } as ModelDescription;
        if (diagonal) {
          const mu: number[] = spec.ising.moments;
          const periodic = spec.chain.boundary === 'periodic';
          const f = (i: number, j: number) => {
            const d = Math.abs(i - j);
            const rr = periodic ? Math.min(d, L - d) : d;
            return spec.ising.range === 'nearest' ? (rr === 1 ? 1 : 0) : 1 / rr ** 3;
          };
          const E = new Float64Array(D);
          const lv = new Int32Array(L);
          for (let s = 0; s < D; s++) {
            for (let i = 0, x = s; i < L; i++, x = Math.floor(x / N)) lv[i] = x % N;
            let e = 0;
            for (let i = 0; i < L; i++) e += spec.levels.detuning[lv[i]];
            for (let i = 0; i < L; i++)
              for (let j = i + 1; j < L; j++) e += spec.ising.strength * f(i, j) * mu[lv[i]] * mu[lv[j]];
            E[s] = e;
          }
          const sorted = Array.from(E).sort((a, b) => a - b);
          energies = sorted.slice(0, spec.solve.states);
          const e0 = sorted[0];
          const window = levelWindow(e0, tolerance);
          const ground: number[] = [];
          for (let s = 0; s < D; s++) if (Math.abs(E[s] - e0) <= window) ground.push(s);
          g = ground.length;
          const configs: Int32Array[] = ground.map((s) => {
            const occ = new Int32Array(L * N);
            for (let i = 0, x = s; i < L; i++, x = Math.floor(x / N)) occ[i * N + (x % N)] = 1;
            return occ;
          });
          ref = observablesFrom({ ...model, kind: 'pinned', particles: L }, configs, new Array(g).fill(1 / g));
          entropy = (cut) => {
            const counts = new Map<number, number>();
            for (const s of ground) counts.set(s % N ** cut, (counts.get(s % N ** cut) ?? 0) + 1);
            let vn = 0;
            let purity = 0;
            for (const k of counts.values()) {
              vn -= (k / g) * Math.log(k / g);
              purity += (k / g) ** 2;
            }
            return { vn, r2: -Math.log(purity) };
          };
        } else {
          const h = siteHamiltonian(spec, N);
          const site = buildDense({
            sites: 1,
            periodic: false,
            levels: N,
            ring: false,
            tunnelling: [],
            phase: [],
            detuning: [],
            exchange: 0,
            exchangeRange: 'nearest',
            exchangeCutoff: null,
            weights: [],
            ising: 0,
            moments: new Array(N).fill(0),
            isingRange: 'nearest',
            isingCutoff: null,
            kind: 'pinned',
            particles: 1,
            hopping: 0,
            maxPerSite: 1,
            onsite: 0,
          });
          // Overwrite the single site's matrix with the ladder above (configs are one-hot, in level order).
          let real = true;
          for (let a = 0; a < N; a++)
            for (let b = 0; b < N; b++) {
              site.re[a * N + b] = h.re[a][b];
              site.im[a * N + b] = h.im[a][b];
              if (Math.abs(h.im[a][b]) > 1e-15) real = false;
            }
          site.real = real;
          const one = groundMixture(site, tolerance);
          const d = one.degeneracy;
          g = d ** L;
          // Lowest energies of the chain: sums of L site energies, the lowest `states` of them.
          let sums = [0];
          for (let i = 0; i < L; i++)
            sums = sums
              .flatMap((x) => one.values.map((e) => x + e))
              .sort((a, b) => a - b)
              .slice(0, 64);
          energies = sums.slice(0, spec.solve.states);
          const p1 = Array.from({ length: N }, (_, n) => one.projectorRe[n * N + n] / d);
          const mean = p1.reduce((s, p, n) => s + n * p, 0);
          const spread = p1.reduce((s, p, n) => s + n * n * p, 0) - mean * mean;
          ref = {
            populations: Array.from({ length: L }, () => p1),
            level_mean: new Array(L).fill(mean),
            spread: new Array(L).fill(spread),
            string_width: (1 - 1 / L) * spread,
            pair_separation: Array.from({ length: L }, (_, i) =>
              Array.from({ length: L }, (_, j) => (i === j ? 0 : 2 * spread)),
            ),
            density: [],
            double_occupancy: [],
          };
          entropy = (cut) => ({ vn: cut * Math.log(d), r2: cut * Math.log(d) });
        }
        const key = `${diagonal ? 'diagonal' : 'free'}/${spec.solve.symmetries}/${g > 64 ? 'g>64' : 'g<=64'}`;
        tally[key] = (tally[key] ?? 0) + 1;
        if (!record.solver.converged) {
          fail('not converged');
          continue;
        }
        if (maxDiff(record.energies, energies) > 1e-8 * Math.max(1, Math.abs(energies[0])))
          fail(`energies ${JSON.stringify(record.energies)} closed form ${JSON.stringify(energies)}`);
        if (!record.solver.degeneracy_complete) {
          if (g <= 64) fail(`incomplete (${record.solver.degeneracy} found) at g = ${g}`);
          if (record.solver.degeneracy > g) fail(`degeneracy ${record.solver.degeneracy} above g = ${g}`);
          continue;
        }
        if (record.solver.degeneracy !== g) {
          fail(`degeneracy ${record.solver.degeneracy}, closed form ${g}`);
          continue;
        }
        const got = record.observables as unknown as Record<string, unknown>;
        for (const name of ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'] as const) {
          const dd = maxDiff(got[name], ref[name]);
          if (!(dd <= 1e-7)) fail(`${name} off by ${dd} (g ${g})`);
        }
        const cuts = (got.entanglement ?? []) as { cut: number; von_neumann: number; renyi_2: number }[];
        for (const cut of cuts) {
          const e = entropy(cut.cut);
          if (!(Math.abs(e.vn - cut.von_neumann) <= 1e-7 && Math.abs(e.r2 - cut.renyi_2) <= 1e-7))
            fail(`cut ${cut.cut}: ${cut.von_neumann}, ${cut.renyi_2}; closed form ${e.vn}, ${e.r2} (g ${g})`);
        }
      }
      if (process.env.FUZZ_REPORT)
        writeFileSync(process.env.FUZZ_REPORT + '.large', JSON.stringify({ tally, failures }, null, 1));
      expect(failures).toEqual([]);
    },
    Math.max(120_000, LARGE * 30_000),
  );
});
