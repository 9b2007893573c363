// The exact thermal method against outside sources: free molecules in closed form, the open XX
// chain as free fermions (Lieb, Schultz and Mattis, Ann. Phys. 16, 407 (1961)), the open
// transverse-field Ising chain from its free-fermion modes (Pfeuty, Ann. Phys. 57, 79 (1970)), the
// high-temperature expansion, and a Boltzmann sum over ml-matrix's eigen-decomposition of the plain
// dense build of docs/model.md (tests/support/occupationReference.ts) on random small specs.

import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, SingularValueDecomposition } from 'ml-matrix';
import { validateSpec } from '../../src/spec/spec.js';
import { runThermal, planThermal, type ThermalResult } from '../../src/thermal/thermal.js';
import { buildDense, observablesFrom, type Kind, type ModelDescription } from '../support/occupationReference.js';
import { rng } from '../support/random.js';

function thermal(
  raw: Record<string, unknown>,
  temperatures: number[],
  extra: Record<string, unknown> = {},
): ThermalResult {
  const spec = validateSpec({ ...raw, thermal: { temperatures, method: 'exact', ...extra } });
  return runThermal(spec, planThermal(spec));
}

const TEMPERATURES = [0.03, 0.2, 0.7, 1.5, 4, 20];

describe('free molecules: Z = z^L', () => {
  // One open ladder of N levels with uniform tunnelling J: h = -J (|n+1><n| + h.c.), whose levels
  // are e_k = -2 J cos(pi k / (N+1)) with eigenvectors sqrt(2/(N+1)) sin(pi k n' / (N+1)), n' = n+1
  // (the open tight-binding chain, common practice).
  for (const [kind, L, N, J, symmetries] of [
    ['pinned', 4, 3, 0.8, 'auto'],
    ['pinned', 4, 4, 1.1, 'none'],
    ['pinned', 3, 5, 0.6, 'auto'],
    ['hardcore', 3, 3, 0.9, 'auto'],
  ] as const) {
    it(`${kind}, ${L} sites, ${N} levels, symmetries ${symmetries}`, () => {
      const raw = {
        chain: { sites: L, boundary: L >= 3 ? 'periodic' : 'open' },
        levels: { count: N, tunnelling: J },
        particles: kind === 'pinned' ? { kind } : { kind, number: L },
        solve: { symmetries },
      };
      const result = thermal(raw, TEMPERATURES);
      const levels = Array.from({ length: N }, (_, k) => -2 * J * Math.cos((Math.PI * (k + 1)) / (N + 1)));
      const amp = (k: number, n: number) => Math.sqrt(2 / (N + 1)) * Math.sin((Math.PI * (k + 1) * (n + 1)) / (N + 1));
      result.rows.forEach((row, t) => {
        const T = TEMPERATURES[t];
        const w = levels.map((e) => Math.exp(-(e - levels[0]) / T));
        const z = w.reduce((a, b) => a + b, 0);
        const e1 = levels.reduce((s, e, k) => s + (w[k] * e) / z, 0);
        const e2 = levels.reduce((s, e, k) => s + (w[k] * e * e) / z, 0);
        const lnz = Math.log(z) - levels[0] / T;
        expect(row.energy).toBeCloseTo(L * e1, 10);
        expect(row.specific_heat).toBeCloseTo((L * (e2 - e1 * e1)) / (T * T), 9);
        expect(row.entropy).toBeCloseTo(L * (lnz + e1 / T), 9);
        expect(row.free_energy).toBeCloseTo(-T * L * lnz, 9);
        const pops = Array.from({ length: N }, (_, n) =>
          levels.reduce((s, _e, k) => s + (w[k] * amp(k, n) ** 2) / z, 0),
        );
        for (let i = 0; i < L; i++)
          for (let n = 0; n < N; n++) expect(row.observables.populations[i][n]).toBeCloseTo(pops[n], 10);
        // independent sites: no connected correlation
        const c = row.observables.level_correlation!;
        for (let i = 0; i < L; i++)
          for (let j = 0; j < L; j++) if (i !== j) expect(Math.abs(c[i][j])).toBeLessThan(1e-10);
      });
    });
  }
});

describe('the open XX chain as free fermions (Lieb, Schultz and Mattis 1961)', () => {
  // Two levels, no tunnelling: the exchange V (a+_{i,1} a_{i,0} a+_{j,0} a_{j,1} + h.c.) of
  // docs/model.md is V (s+_i s-_j + h.c.) on nearest neighbours, which Jordan-Wigner turns into
  // hopping V (c+_i c_j + h.c.) without a string (neighbours), with single-particle energies
  // e_k = 2 V cos(pi k / (L+1)). Every sector is summed (the fermion number is free) and there is no
  // detuning, so the chemical potential is 0: E = sum_k e_k f(e_k), C = sum_k (e_k/T)^2 f (1 - f).
  for (const [L, V, symmetries] of [
    [8, 1, 'auto'],
    [7, -0.6, 'auto'],
    [6, 1.3, 'none'],
  ] as const) {
    it(`L = ${L}, V = ${V}, symmetries ${symmetries}`, () => {
      const raw = {
        chain: { sites: L },
        levels: { count: 2, tunnelling: 0 },
        exchange: { strength: V },
        solve: { symmetries },
      };
      const result = thermal(raw, TEMPERATURES);
      const eps = Array.from({ length: L }, (_, k) => 2 * V * Math.cos((Math.PI * (k + 1)) / (L + 1)));
      result.rows.forEach((row, t) => {
        const T = TEMPERATURES[t];
        let e = 0;
        let c = 0;
        let s = 0;
        for (const x of eps) {
          const f = 1 / (Math.exp(x / T) + 1);
          e += x * f;
          c += (x / T) ** 2 * f * (1 - f);
          s -= (f > 0 ? f * Math.log(f) : 0) + (f < 1 ? (1 - f) * Math.log(1 - f) : 0);
        }
        expect(Math.abs(row.energy - e)).toBeLessThan(1e-10);
        expect(Math.abs(row.specific_heat - c)).toBeLessThan(1e-10);
        expect(Math.abs(row.entropy - s)).toBeLessThan(1e-10);
      });
    });
  }
});

describe('the open transverse-field Ising chain (Pfeuty 1970)', () => {
  // H = -sum_{i<L-1} sz_i sz_{i+1} - g sum_i sx_i, written as in tests/support/ising.ts (two levels,
  // J = g, W = -4 with moments -1/2, +1/2) on an open chain. Jordan-Wigner gives a quadratic
  // fermion form H = sum_k L_k (eta+_k eta_k - 1/2) with no parity constraint on an open chain;
  // the mode energies L_k are twice the singular values of the bidiagonal L x L matrix with g on the
  // diagonal and 1 beside it (Pfeuty's (A - B)(A + B) eigenproblem). Then
  // E = -sum_k (L_k/2) tanh(L_k / 2T) and C = sum_k (L_k/2T)^2 / cosh^2(L_k/2T).
  for (const [L, g] of [
    [7, 0.6],
    [8, 1],
    [6, 1.7],
  ] as const) {
    it(`L = ${L}, g = ${g}`, () => {
      const raw = {
        chain: { sites: L },
        levels: { count: 2, tunnelling: g },
        ising: { strength: -4, moments: [-0.5, 0.5] },
      };
      const result = thermal(raw, TEMPERATURES);
      const b = Matrix.zeros(L, L);
      for (let i = 0; i < L; i++) {
        b.set(i, i, g);
        if (i + 1 < L) b.set(i, i + 1, 1);
      }
      const modes = new SingularValueDecomposition(b).diagonal.map((s) => 2 * s);
      // the ground energy is -sum L_k / 2
      expect(result.ground_energy).toBeCloseTo(-modes.reduce((a, x) => a + x / 2, 0), 9);
      result.rows.forEach((row, t) => {
        const T = TEMPERATURES[t];
        const e = -modes.reduce((a, x) => a + (x / 2) * Math.tanh(x / (2 * T)), 0);
        const c = modes.reduce((a, x) => a + (x / (2 * T)) ** 2 / Math.cosh(x / (2 * T)) ** 2, 0);
        expect(Math.abs(row.energy - e)).toBeLessThan(1e-9);
        expect(Math.abs(row.specific_heat - c)).toBeLessThan(1e-9);
      });
    });
  }
});

/** A random small model with every term on, of any kind, as a spec and as the reference's description. */
function randomModel(r: () => number, id: number): { spec: Record<string, any>; model: ModelDescription } {
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const kind: Kind = (['pinned', 'pinned', 'hardcore', 'boson', 'fermion'] as const)[id % 5];
  const N = pick([2, 3, 3]);
  const L = kind === 'pinned' ? pick([3, 4, 5]) : pick([3, 4]);
  const particles = kind === 'pinned' ? L : pick([1, 2, L - 1]);
  const maxPerSite = kind === 'boson' ? 2 : 1;
  const periodic = r() < 0.5;
  const ring = N >= 3 && r() < 0.3;
  const links = ring ? N : N - 1;
  // degenerate cases: every few cases symmetric couplings (level flip) or no tunnelling (charge)
  const degenerate = id % 3 === 0;
  const tunnelling = Array.from({ length: links }, () => (degenerate ? 0 : u(0.2, 1.2)));
  const phase = Array.from({ length: links }, () => (r() < 0.6 ? 0 : u(-Math.PI, Math.PI)));
  const detuning = Array.from({ length: N }, () => (degenerate ? 0 : u(-1, 1)));
  const exchange = u(-1.5, 1.5);
  const weights = Array.from({ length: N - 1 }, () => u(0.5, 1.5));
  const ising = degenerate ? 0 : u(-1, 1);
  const moments = Array.from({ length: N }, () => u(-1, 1));
  const hopping = kind === 'pinned' ? 0 : u(-1, 1);
  const onsite = kind === 'boson' ? u(0, 2) : 0;
  const model: ModelDescription = {
    sites: L,
    periodic,
    levels: N,
    ring,
    tunnelling,
    phase,
    detuning,
    exchange,
    exchangeRange: 'nearest',
    exchangeCutoff: null,
    weights,
    ising,
    moments,
    isingRange: 'nearest',
    isingCutoff: null,
    kind,
    particles,
    hopping,
    maxPerSite,
    onsite,
  };
  const particlesSpec: Record<string, unknown> = { kind };
  if (kind !== 'pinned') {
    particlesSpec.number = particles;
    particlesSpec.hopping = hopping;
    if (kind === 'boson') Object.assign(particlesSpec, { max_per_site: maxPerSite, onsite });
  }
  const spec = {
    chain: { sites: L, boundary: periodic ? 'periodic' : 'open' },
    levels: { count: N, boundary: ring ? 'ring' : 'open', tunnelling, phase, detuning },
    exchange: { strength: exchange, weights },
    ising: { strength: ising, moments },
    particles: particlesSpec,
    solve: { symmetries: r() < 0.5 ? 'auto' : 'none' },
  };
  return { spec, model };
}

/** Boltzmann sums over ml-matrix's eigen-decomposition of the dense H (the real embedding when complex). */
function denseThermal(model: ModelDescription, T: number) {
  const h = buildDense(model);
  const D = h.dim;
  const size = h.real ? D : 2 * D;
  const m = new Matrix(size, size);
  for (let a = 0; a < D; a++)
    for (let b = 0; b < D; b++) {
      const x = h.re[a * D + b];
      m.set(a, b, x);
      if (!h.real) {
        const y = h.im[a * D + b];
        m.set(a + D, b + D, x);
        m.set(a, b + D, -y);
        m.set(a + D, b, y);
      }
    }
  const evd = new EigenvalueDecomposition(m, { assumeSymmetric: true });
  const values = evd.realEigenvalues;
  const e0 = Math.min(...values);
  // every eigenvalue of the embedding comes twice; the factor 2 cancels in every ratio
  const w = values.map((e) => Math.exp(-(e - e0) / T));
  const z = w.reduce((a, b) => a + b, 0);
  const e1 = values.reduce((s, e, k) => s + w[k] * e, 0) / z;
  const e2 = values.reduce((s, e, k) => s + w[k] * (e - e1) ** 2, 0) / z;
  const lnz = Math.log(h.real ? z : z / 2) - e0 / T;
  const p = new Float64Array(D);
  const V = evd.eigenvectorMatrix;
  values.forEach((_, k) => {
    const col = V.getColumn(k);
    let n = 0;
    for (const x of col) n += x * x;
    for (let s = 0; s < D; s++) p[s] += (w[k] * (col[s] ** 2 + (h.real ? 0 : col[s + D] ** 2))) / (n * z);
  });
  return {
    energy: e1,
    specific_heat: e2 / (T * T),
    entropy: lnz + e1 / T,
    free_energy: -T * lnz,
    observables: observablesFrom(model, h.configs, p),
    correlation: pinnedCorrelation(model, h.configs, p),
  };
}

describe('dense differential: random small specs of every kind against a Boltzmann sum', () => {
  const r = rng(20261205);
  const temps = [0.05, 0.4, 2];
  for (let id = 0; id < 20; id++) {
    const { spec, model } = randomModel(r, id);
    it(`case ${id}: ${model.kind}, ${model.sites} sites, ${model.levels} levels, symmetries ${spec.solve.symmetries}`, () => {
      const result = thermal(spec, temps);
      result.rows.forEach((row, t) => {
        const ref = denseThermal(model, temps[t]);
        for (const key of ['energy', 'specific_heat', 'entropy', 'free_energy'] as const)
          expect(row[key], key).toBeCloseTo(ref[key], 8);
        const o = row.observables;
        const names = ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'] as const;
        for (const name of names) expect(maxDiff(o[name], ref.observables[name]), name).toBeLessThan(1e-8);
        if (model.kind === 'pinned')
          expect(maxDiff(o.level_correlation, ref.correlation), 'level_correlation').toBeLessThan(1e-8);
        if (model.kind !== 'pinned') {
          expect(maxDiff(o.density, ref.observables.density)).toBeLessThan(1e-8);
          expect(maxDiff(o.double_occupancy, ref.observables.double_occupancy)).toBeLessThan(1e-8);
        }
      });
    });
  }
});

/** <n_i n_j> - <n_i><n_j> of pinned configurations (n_i the level of site i's molecule) under p. */
function pinnedCorrelation(model: ModelDescription, configs: Int32Array[], p: Float64Array): number[][] {
  const L = model.sites;
  const N = model.levels;
  const levelOf = (occ: Int32Array, i: number) => {
    for (let n = 0; n < N; n++) if (occ[i * N + n] === 1) return n;
    return 0;
  };
  const mean = new Array<number>(L).fill(0);
  const pair = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  configs.forEach((occ, s) => {
    for (let i = 0; i < L; i++) {
      mean[i] += p[s] * levelOf(occ, i);
      for (let j = 0; j < L; j++) pair[i][j] += p[s] * levelOf(occ, i) * levelOf(occ, j);
    }
  });
  return pair.map((row, i) => row.map((x, j) => x - mean[i] * mean[j]));
}

function maxDiff(a: unknown, b: unknown): number {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b);
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return Infinity;
    return a.reduce((m: number, x, k) => Math.max(m, maxDiff(x, b[k])), 0);
  }
  return Infinity;
}

describe('high-temperature expansion', () => {
  // E(T) = <H> - (<H^2> - <H>^2)/T + O(1/T^2), <X> = Tr X / dim (common practice); the traces are
  // taken from the dense matrix of docs/model.md: Tr H = sum of the diagonal, Tr H^2 = sum |H_ab|^2.
  const r = rng(77);
  for (let id = 0; id < 5; id++) {
    const { spec, model } = randomModel(r, id);
    it(`case ${id}: ${model.kind}`, () => {
      const h = buildDense(model);
      const D = h.dim;
      let t1 = 0;
      let t2 = 0;
      for (let a = 0; a < D; a++) {
        t1 += h.re[a * D + a];
        for (let b = 0; b < D; b++) t2 += h.re[a * D + b] ** 2 + (h.real ? 0 : h.im[a * D + b] ** 2);
      }
      const m1 = t1 / D;
      const variance = t2 / D - m1 * m1;
      const norm = Math.sqrt(t2); // bounds every |E_k|
      const temps = [200, 1000];
      const result = thermal(spec, temps);
      result.rows.forEach((row, k) => {
        const T = temps[k];
        // the remainder is the third cumulant over 2 T^2 and beyond, |kappa_3| <= 8 ||H||^3
        expect(Math.abs(row.energy - (m1 - variance / T))).toBeLessThan((8 * norm ** 3) / T ** 2);
      });
      // and the expansion's own first-order term is resolved: at T = 1000 the error is far below variance/T
      expect(Math.abs(result.rows[1].energy - (m1 - variance / 1000))).toBeLessThan(0.05 * (variance / 1000) + 1e-12);
    });
  }
});

describe('entropies per particle: the temperature that gives each', () => {
  // Free two-level molecules, h = -J sx: levels -J, +J, so s(T) = ln(2 cosh(J/T)) - (J/T) tanh(J/T)
  // per molecule (closed form, common practice); it runs from 0 to ln 2.
  const J = 0.8;
  const perMolecule = (T: number) => Math.log(2 * Math.cosh(J / T)) - (J / T) * Math.tanh(J / T);
  const raw = { chain: { sites: 4 }, levels: { count: 2, tunnelling: J } };
  it('exact: s(T) at the temperatures found equals the targets', () => {
    const targets = [0.05, 0.3, 0.6];
    const spec = validateSpec({ ...raw, thermal: { entropies: targets, method: 'exact' } });
    const result = runThermal(spec, planThermal(spec));
    result.rows.forEach((row, i) => {
      expect(row.target_entropy).toBe(targets[i]);
      expect(perMolecule(row.temperature_model)).toBeCloseTo(targets[i], 9);
      expect(row.entropy / 4).toBeCloseTo(targets[i], 9);
    });
  });
  it('Lanczos: the estimate of S at the temperature found equals the target', () => {
    const spec = validateSpec({ ...raw, thermal: { entropies: [0.3], method: 'lanczos', vectors: 6 } });
    const row = runThermal(spec, planThermal(spec), { denseBlock: 0, lowStates: 1 }).rows[0];
    expect(row.entropy / 4).toBeCloseTo(0.3, 8);
    // and the temperature is the exact one within a few error bars of the entropy (dS/dT = C/T)
    const exactT = runThermal(validateSpec({ ...raw, thermal: { entropies: [0.3], method: 'exact' } })).rows[0];
    const slope = row.specific_heat / row.temperature_model;
    expect(Math.abs(row.temperature_model - exactT.temperature_model)).toBeLessThan(
      (5 * row.errors!.entropy) / slope + 1e-9,
    );
  });
  it('an entropy out of reach names its key and the range', () => {
    const spec = validateSpec({ ...raw, thermal: { entropies: [0.3, 0.8] } });
    expect(() => runThermal(spec)).toThrow(/thermal\.entropies\[1\].*0\.693147/);
  });
});

describe('point-group and automorphism sectors', () => {
  // Sectors of the lattice's mirrors (and of a tweezer ring's rotations) must give the same Gibbs
  // state as the whole space, itself checked above against ml-matrix's dense decomposition.
  const geometries: [string, Record<string, unknown>][] = [
    ['open 3x3 square, field along z', { shape: 'square', size: [3, 3] }],
    [
      'ring of 6 tweezers',
      {
        shape: 'custom',
        positions: Array.from({ length: 6 }, (_, k) => [Math.cos((Math.PI * k) / 3), Math.sin((Math.PI * k) / 3)]),
      },
    ],
  ];
  for (const [name, lattice] of geometries)
    it(name, () => {
      const raw = (symmetries: string) =>
        validateSpec({
          lattice,
          levels: { count: 2, tunnelling: 0.3, detuning: [0, 0.2] },
          exchange: { strength: 1, range: 'dipolar' },
          ising: { strength: 0.4, moments: [0.5, -0.5] },
          solve: { symmetries },
          thermal: { temperatures: [0.3, 1, 4], method: 'exact' },
        });
      const withGroup = runThermal(raw('auto'));
      const whole = runThermal(raw('none'));
      expect(withGroup.symmetries.some((s) => s === 'point_group' || s === 'automorphism')).toBe(true);
      withGroup.rows.forEach((row, t) => {
        const ref = whole.rows[t];
        for (const key of ['energy', 'entropy', 'specific_heat', 'free_energy'] as const)
          expect(Math.abs(row[key] - ref[key])).toBeLessThan(1e-9);
        expect(Math.abs(row.observables.string_width - ref.observables.string_width)).toBeLessThan(1e-9);
        row.observables.level_mean.forEach((v, i) =>
          expect(Math.abs(v - ref.observables.level_mean[i])).toBeLessThan(1e-9),
        );
      });
    });
});
