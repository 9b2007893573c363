// solve.observables = "each": every solved state's own observables, against ml-matrix's dense
// eigenvectors of the plain dense Hamiltonian of docs/model.md (tests/support/occupationReference.ts,
// written from that page alone). Random small chains with every term on and no degeneracy, every
// particle kind, both symmetry settings; degenerate levels (equal mixtures of the copies found in one
// sector); a level cut by solve.states (level_incomplete); the spec key's validation.

import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { planPoint, solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import { describeRecord } from '../../src/point/describe.js';
import type { StateRecord } from '../../src/point/record.js';
import { SpecError } from '../../src/errors/errors.js';
import { validateSpec } from '../../src/spec/spec.js';
import {
  buildDense,
  levelWindow,
  observablesFrom,
  type DenseModel,
  type Kind,
  type ModelDescription,
} from '../support/occupationReference.js';
import { rng } from '../support/random.js';

/** The dense spectrum grouped into levels (the documented window), each with its equal mixture's p(s). */
interface DenseLevel {
  energy: number;
  /** Copies (complex H: each complex eigenvector once). */
  copies: number;
  probabilities: Float64Array;
}

function denseLevels(h: DenseModel, tolerance: number): DenseLevel[] {
  const D = h.dim;
  const size = h.real ? D : 2 * D;
  // A complex H as its real embedding [[A, -B], [B, A]]: each eigenvalue twice, psi = x + iy as (x, y) and (-y, x).
  const matrix = new Matrix(size, size);
  for (let r = 0; r < D; r++)
    for (let c = 0; c < D; c++) {
      const x = h.re[r * D + c];
      matrix.set(r, c, x);
      if (!h.real) {
        const y = h.im[r * D + c];
        matrix.set(r + D, c + D, x);
        matrix.set(r, c + D, -y);
        matrix.set(r + D, c, y);
      }
    }
  const evd = new EigenvalueDecomposition(matrix, { assumeSymmetric: true });
  const V = evd.eigenvectorMatrix;
  const order = evd.realEigenvalues.map((e, k) => [e, k] as const).sort((a, b) => a[0] - b[0]);
  const levels: { energy: number; vectors: number[] }[] = [];
  for (const [e, k] of order) {
    const last = levels[levels.length - 1];
    if (last && e - last.energy <= levelWindow(last.energy, tolerance)) last.vectors.push(k);
    else levels.push({ energy: e, vectors: [k] });
  }
  return levels.map(({ energy, vectors }) => {
    // p(s) = (1/n) sum over the level's embedded vectors of u_s^2 + u_{s+D}^2: the average of |psi(s)|^2.
    const p = new Float64Array(D);
    for (const k of vectors) {
      const u = V.getColumn(k);
      let norm = 0;
      for (const x of u) norm += x * x;
      for (let s = 0; s < D; s++) p[s] += (u[s] * u[s] + (h.real ? 0 : u[s + D] * u[s + D])) / norm / vectors.length;
    }
    return { energy, copies: h.real ? vectors.length : vectors.length / 2, probabilities: p };
  });
}

/** <n_i n_j> - <n_i><n_j> with n_i = sum_a a n_{i,a} (docs/model.md), from basis-state probabilities. */
function levelCorrelation(m: ModelDescription, configs: Int32Array[], p: ArrayLike<number>): number[][] {
  const L = m.sites;
  const N = m.levels;
  const mean = new Array<number>(L).fill(0);
  const pair = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  configs.forEach((occ, s) => {
    const n = Array.from({ length: L }, (_, i) => {
      let x = 0;
      for (let a = 0; a < N; a++) x += a * occ[i * N + a];
      return x;
    });
    for (let i = 0; i < L; i++) {
      mean[i] += p[s] * n[i];
      for (let j = 0; j < L; j++) pair[i][j] += p[s] * n[i] * n[j];
    }
  });
  return pair.map((row, i) => row.map((x, j) => x - mean[i] * mean[j]));
}

function maxDiff(a: unknown, b: unknown): number {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b);
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return Infinity;
    return Math.max(0, ...a.map((x, k) => maxDiff(x, b[k])));
  }
  return Infinity;
}

/** The reference observables of a level's mixture, for the names both sides have. */
function referenceObservables(m: ModelDescription, h: DenseModel, p: ArrayLike<number>): Record<string, unknown> {
  const o: Record<string, unknown> = { ...observablesFrom(m, h.configs, p) };
  o.level_correlation = levelCorrelation(m, h.configs, p);
  if (m.kind === 'pinned') {
    delete o.density;
    delete o.double_occupancy;
  }
  return o;
}

function expectObservablesClose(
  mine: Record<string, unknown>,
  reference: Record<string, unknown>,
  tol: number,
  what: string,
): void {
  for (const [name, value] of Object.entries(reference)) {
    const d = maxDiff(mine[name], value);
    if (!(d <= tol)) throw new Error(`${what}: ${name} off by ${d} (allowed ${tol})`);
  }
}

function rawSpec(m: ModelDescription, states: number, symmetries: string, tolerance: number): Record<string, any> {
  const particles: Record<string, unknown> = { kind: m.kind };
  if (m.kind !== 'pinned') {
    particles.number = m.particles;
    particles.hopping = m.hopping;
    if (m.kind === 'boson') {
      particles.max_per_site = m.maxPerSite;
      particles.onsite = m.onsite;
    }
  }
  return {
    chain: { sites: m.sites, boundary: m.periodic ? 'periodic' : 'open' },
    levels: {
      count: m.levels,
      boundary: m.ring ? 'ring' : 'open',
      tunnelling: m.tunnelling,
      phase: m.phase,
      detuning: m.detuning,
    },
    exchange: {
      strength: m.exchange,
      range: m.exchangeRange,
      weights: m.weights,
      ...(m.exchangeCutoff !== null ? { cutoff: m.exchangeCutoff } : {}),
    },
    ising: {
      strength: m.ising,
      moments: m.moments,
      range: m.isingRange,
      ...(m.isingCutoff !== null ? { cutoff: m.isingCutoff } : {}),
    },
    particles,
    solve: { states, tolerance, symmetries, observables: 'each', entanglement: 'none' },
  };
}

/** A chain with every term on and random couplings (open, so no k <-> -k pairs), small enough for a dense reference. */
function genericModel(r: () => number, kind: Kind): ModelDescription {
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const N = pick([2, 3, 3]);
  const L = kind === 'pinned' ? pick([3, 4]) : pick([3, 4]);
  const ring = N >= 3 && r() < 0.4;
  const links = ring ? N : N - 1;
  const particles = kind === 'pinned' ? L : pick([2, 3]);
  return {
    sites: L,
    periodic: false,
    levels: N,
    ring,
    tunnelling: Array.from({ length: links }, () => u(0.3, 1.5)),
    phase: Array.from({ length: links }, () => (r() < 0.5 ? 0 : u(-Math.PI, Math.PI))),
    detuning: Array.from({ length: N }, () => u(-1, 1)),
    exchange: u(-2, 2),
    exchangeRange: r() < 0.5 ? 'nearest' : 'dipolar',
    exchangeCutoff: null,
    weights: Array.from({ length: N - 1 }, () => u(0.5, 1.5)),
    ising: u(-1, 1),
    moments: Array.from({ length: N }, () => u(-1, 1)),
    isingRange: r() < 0.5 ? 'nearest' : 'dipolar',
    isingCutoff: null,
    kind,
    particles,
    hopping: kind === 'pinned' ? 0 : u(-1.5, 1.5),
    maxPerSite: kind === 'boson' ? 2 : 1,
    onsite: kind === 'boson' ? u(0, 3) : 0,
  };
}

function solveEach(raw: Record<string, any>): PointRecord {
  return solvePoint(validateSpec(raw), { groundStates: false }).record;
}

const KINDS: Kind[] = ['pinned', 'hardcore', 'boson', 'fermion'];
const STATES = 4;
const TOLERANCE = 1e-10;

describe('solve.observables = "each" without degeneracy', () => {
  for (const kind of KINDS) {
    for (const symmetries of ['auto', 'none']) {
      it(`gives each state its own observables: ${kind}, symmetries ${symmetries}`, () => {
        const r = rng(kind.length * 1000 + symmetries.length);
        let checked = 0;
        for (let attempt = 0; attempt < 40 && checked < 3; attempt++) {
          const model = genericModel(r, kind);
          const h = buildDense(model);
          if (h.dim < STATES + 2 || h.dim > 300) continue;
          const levels = denseLevels(h, TOLERANCE);
          // No degeneracy among the states compared (nor with the next one), else pick another chain.
          if (levels.slice(0, STATES + 1).some((l) => l.copies !== 1)) continue;
          const record = solveEach(rawSpec(model, STATES, symmetries, TOLERANCE));
          const states = record.states!;
          expect(states.map((s) => s.index)).toEqual([0, 1, 2, 3]);
          for (const s of states) {
            const level = levels[s.index];
            // Energies against ml-matrix's dense eigenvalues.
            expect(Math.abs(s.energy - level.energy)).toBeLessThanOrEqual(1e-8 * Math.max(1, Math.abs(level.energy)));
            expect(s.mixture_of).toBeUndefined();
            // Only the highest state's level is unconfirmed (nobody looked past the requested count).
            expect(s.level_incomplete).toBe(s.index === STATES - 1 ? true : undefined);
            if (kind === 'pinned' && symmetries === 'auto') expect(s.sector).not.toBeNull();
            else expect(s.sector).toBeNull();
            // Eigenvector error ~ residual / gap (common practice): the gap to the nearest other level.
            const gap = Math.min(
              ...levels.filter((_, l) => l !== s.index).map((l) => Math.abs(l.energy - level.energy)),
            );
            const tol = 1e-8 + (100 * TOLERANCE * model.levels ** 2) / gap;
            expectObservablesClose(
              s.observables,
              referenceObservables(model, h, level.probabilities),
              tol,
              `${kind} state ${s.index}`,
            );
          }
          // The ground state's entry and the ground observables agree.
          expect(maxDiff(states[0].observables.populations, record.observables.populations)).toBeLessThan(1e-12);
          checked++;
        }
        expect(checked).toBe(3);
      });
    }
  }
});

/** Free two-level molecules (J = 1, nothing else) on an open chain: levels -L, -L+2, ... with binomial multiplicities. */
function freeModel(sites: number): ModelDescription {
  return {
    sites,
    periodic: false,
    levels: 2,
    ring: false,
    tunnelling: [1],
    phase: [0],
    detuning: [0, 0],
    exchange: 0,
    exchangeRange: 'nearest',
    exchangeCutoff: null,
    weights: [1],
    ising: 0,
    moments: [0, 0],
    isingRange: 'nearest',
    isingCutoff: null,
    kind: 'pinned',
    particles: sites,
    hopping: 0,
    maxPerSite: 1,
    onsite: 0,
  };
}

/** Entries grouped by their level (equal energies within the window), in order. */
function byLevel(states: StateRecord[], tolerance: number): StateRecord[][] {
  const out: StateRecord[][] = [];
  for (const s of states) {
    const last = out[out.length - 1];
    if (last && s.energy - last[0].energy <= levelWindow(last[0].energy, tolerance)) last.push(s);
    else out.push([s]);
  }
  return out;
}

const sectorKey = (s: StateRecord) => JSON.stringify(s.sector);

describe('solve.observables = "each" with degenerate levels', () => {
  it('mixes the copies of a level found in one sector, and the whole level reproduces the dense mixture', () => {
    // Three free two-level molecules: E = -3 (once), -1 (3 copies), 1 (3), 3 (once), a closed form
    // of independent two-level systems (common practice). States 0..4 hold the ground level and the
    // whole 3-fold level, and one copy of the next level.
    const model = freeModel(3);
    const h = buildDense(model);
    const levels = denseLevels(h, TOLERANCE);
    expect(levels.map((l) => l.copies)).toEqual([1, 3, 3, 1]);
    for (const symmetries of ['auto', 'none']) {
      const record = solveEach(rawSpec(model, 5, symmetries, TOLERANCE));
      const states = record.states!;
      expect(states.map((s) => s.energy)).toEqual(record.energies);
      const grouped = byLevel(states, TOLERANCE);
      expect(grouped.map((g) => g.length)).toEqual([1, 3, 1]);
      const level = grouped[1];
      for (const s of level) {
        // Every copy in its sector's mixture: the copies sharing its sector, itself included.
        const sameSector = level.filter((t) => sectorKey(t) === sectorKey(s)).map((t) => t.index);
        if (sameSector.length > 1) expect(s.mixture_of).toEqual(sameSector);
        else expect(s.mixture_of).toBeUndefined();
        expect(s.level_incomplete).toBeUndefined();
        // Members of one mixture report the same observables.
        for (const t of level) if (sectorKey(t) === sectorKey(s)) expect(t.observables).toEqual(s.observables);
      }
      if (symmetries === 'none') expect(level.every((s) => s.mixture_of?.length === 3)).toBe(true);
      // The copies' entries, each counted once, average to the level's equal mixture (ml-matrix).
      const average: Record<string, unknown> = {};
      const names = ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'];
      const mean = (xs: unknown[]): unknown =>
        typeof xs[0] === 'number'
          ? (xs as number[]).reduce((a, b) => a + b, 0) / xs.length
          : (xs[0] as unknown[]).map((_, k) => mean(xs.map((x) => (x as unknown[])[k])));
      for (const name of names) average[name] = mean(level.map((s) => s.observables[name]));
      const reference = referenceObservables(model, h, levels[1].probabilities);
      expectObservablesClose(
        average,
        Object.fromEntries(names.map((n) => [n, reference[n]])),
        1e-8,
        `free chain level 1, symmetries ${symmetries}`,
      );
      // The top entry is the first copy of the next 3-fold level: cut by the requested count.
      expect(grouped[2][0].level_incomplete).toBe(true);
    }
  });

  it('keeps the two momenta of a k, -k pair apart in sectors, and mixes them without sectors', () => {
    // A periodic pinned ring of 5 three-level molecules with exchange: translation makes the levels
    // of momenta k and -k coincide (common practice), so the spectrum holds pairs.
    const model: ModelDescription = {
      ...freeModel(5),
      periodic: true,
      levels: 3,
      tunnelling: [1, 0.7],
      phase: [0, 0],
      detuning: [0, 0.3, -0.2],
      exchange: 1.5,
      weights: [1, 0.8],
      moments: [0, 0, 0],
    };
    const h = buildDense(model);
    const levels = denseLevels(h, TOLERANCE);
    const pair = levels.findIndex((l) => l.copies === 2);
    expect(pair).toBeGreaterThanOrEqual(0);
    const before = levels.slice(0, pair).reduce((n, l) => n + l.copies, 0);
    const states = before + 3;
    const withSectors = solveEach(rawSpec(model, states, 'auto', TOLERANCE)).states!;
    const without = solveEach(rawSpec(model, states, 'none', TOLERANCE)).states!;
    const inSectors = withSectors.slice(before, before + 2);
    const mixed = without.slice(before, before + 2);
    // Sectors: two entries of opposite momentum, each its own state.
    expect(inSectors.map((s) => s.sector!.momentum).sort()).toEqual(
      [inSectors[0].sector!.momentum, (model.sites - (inSectors[0].sector!.momentum as number)) % model.sites].sort(),
    );
    expect(inSectors.every((s) => s.mixture_of === undefined)).toBe(true);
    // Whole space: one mixture of both copies.
    expect(mixed.every((s) => JSON.stringify(s.mixture_of) === JSON.stringify([before, before + 1]))).toBe(true);
    const reference = referenceObservables(model, h, levels[pair].probabilities);
    delete reference.level_correlation;
    expectObservablesClose(mixed[0].observables, reference, 1e-7, 'the k, -k pair mixed');
    // The two momentum states' own observables: their average is the pair's mixture (linear in p).
    for (const name of ['populations', 'level_mean', 'string_width', 'pair_separation']) {
      const [a, b] = inSectors.map((s) => s.observables[name]);
      const average =
        typeof a === 'number'
          ? (a + (b as number)) / 2
          : (a as unknown[]).map((row, i) =>
              typeof row === 'number'
                ? (row + (b as number[])[i]) / 2
                : (row as number[]).map((x, j) => (x + (b as number[][])[i][j]) / 2),
            );
      expect(maxDiff(average, reference[name])).toBeLessThan(1e-7);
    }
  });
});

describe('solve.observables = "each" with a ground level larger than solve.states', () => {
  it('lists every copy found, mixed per sector, and the copies average to the whole space', () => {
    // H = 0 on three two-level molecules: all 8 states are one level (common practice), and the
    // solve finds every copy of the ground level whatever solve.states says.
    const model = { ...freeModel(3), tunnelling: [0] };
    const h = buildDense(model);
    const levels = denseLevels(h, TOLERANCE);
    expect(levels.map((l) => l.copies)).toEqual([8]);
    for (const symmetries of ['auto', 'none']) {
      const record = solveEach(rawSpec(model, 2, symmetries, TOLERANCE));
      expect(record.energies).toHaveLength(2);
      const states = record.states!;
      expect(states.map((s) => s.index)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
      expect(states.every((s) => s.level_incomplete === undefined)).toBe(true);
      if (symmetries === 'none') expect(states.every((s) => s.mixture_of?.length === 8)).toBe(true);
      // Each entry counted once: the average over the 8 copies is the level's mixture (ml-matrix).
      const reference = referenceObservables(model, h, levels[0].probabilities);
      for (let i = 0; i < model.sites; i++)
        for (let n = 0; n < 2; n++) {
          const mean = states.reduce((a, s) => a + s.observables.populations[i][n], 0) / states.length;
          expect(Math.abs(mean - (reference.populations as number[][])[i][n])).toBeLessThan(1e-12);
        }
    }
  });
});

describe('solve.observables = "each" and a level cut by solve.states', () => {
  it('marks the copies of a level the count cuts, and none when the whole space is solved', () => {
    const model = freeModel(3);
    for (const symmetries of ['auto', 'none']) {
      // States 0 (ground) and 1: one of the three copies of E = -1.
      const cut = solveEach(rawSpec(model, 2, symmetries, TOLERANCE)).states!;
      expect(cut[0].level_incomplete).toBeUndefined();
      expect(cut[1].level_incomplete).toBe(true);
      // All 8 states: every level whole.
      const whole = solveEach(rawSpec(model, 8, symmetries, TOLERANCE)).states!;
      expect(whole).toHaveLength(8);
      expect(whole.every((s) => s.level_incomplete === undefined)).toBe(true);
    }
  });

  it('is absent with the default "ground"', () => {
    const raw = rawSpec(freeModel(3), 2, 'auto', TOLERANCE);
    delete raw.solve.observables;
    expect(solveEach(raw).states).toBeUndefined();
  });
});

describe('solve.observables validation', () => {
  it('names the key for a wrong value', () => {
    for (const value of ['all', 1, true]) {
      const raw = rawSpec(freeModel(3), 2, 'auto', TOLERANCE);
      raw.solve.observables = value;
      let error: unknown;
      try {
        validateSpec(raw);
      } catch (e) {
        error = e;
      }
      expect(error).toBeInstanceOf(SpecError);
      expect((error as SpecError).keyPath).toBe('solve.observables');
    }
  });
});

describe('solve.observables = "each" in the memory estimate and the text', () => {
  it('counts the one extra probability array of a pinned chain, in sectors or not', () => {
    for (const symmetries of ['auto', 'none']) {
      const raw = rawSpec(freeModel(4), 3, symmetries, TOLERANCE);
      const each = planPoint(validateSpec(raw));
      raw.solve.observables = 'ground';
      const ground = planPoint(validateSpec(raw));
      // One float64 per basis state (2^4 of them), refilled for each state's mixture.
      expect(each.memory.parts.state_observables).toBe(8 * 16);
      expect(ground.memory.parts.state_observables).toBeUndefined();
      expect(each.memory.totalBytes - ground.memory.totalBytes).toBeGreaterThanOrEqual(8 * 16);
    }
  });

  it('lists each state with its scalars and says which are mixtures and which levels are incomplete', () => {
    const record = solveEach(rawSpec(freeModel(3), 5, 'none', TOLERANCE));
    const text = describeRecord(record);
    const head = text.split('\n').findIndex((l) => l.startsWith("each state's observables"));
    expect(head).toBeGreaterThan(0);
    const rows = text.split('\n').slice(head + 3, head + 8);
    expect(rows.map((l) => l.trim().split(/\s+/)[0])).toEqual(['0', '1', '2', '3', '4']);
    // Without sectors the 3-fold level (states 1..3) is one mixture; state 4 starts a level the count cuts.
    for (const k of [1, 2, 3]) expect(rows[k]).toMatch(/mixture of 1, 2, 3$/);
    expect(rows[4]).toMatch(/level incomplete$/);
    expect(text).toMatch(/string width/);
  });
});
