// Zero-temperature spectra by the Lanczos continued fraction (issue 22) against outside sources:
// one molecule's ladder (ml-matrix's dense eigenvectors), the Autler-Townes doublet of a dressed
// two-level molecule (common practice), the exact Lehmann sum over the dense spectrum of the plain
// build of docs/model.md (tests/support/occupationReference.ts) on random small specs of every kind,
// the open XX chain's particle-hole lines (Lieb, Schultz and Mattis, Ann. Phys. 16, 407 (1961)),
// and the sum rules.

import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { computeSpectrum } from '../../src/spectrum/spectrum.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, levelWindow, type ModelDescription } from '../support/occupationReference.js';
import { describeCase, referenceSites } from '../support/latticeReference.js';
import { rng } from '../support/random.js';
import {
  denseProbe,
  embeddedEigen,
  lorentzian,
  mergeLines,
  randomCase,
  type RandomCase,
} from '../support/spectrumReference.js';

type Raw = Record<string, any>;

const run = (raw: Raw) => computeSpectrum(validateSpec(JSON.parse(JSON.stringify(raw)) as Raw)).spectrum;

/**
 * The Lehmann sum: every pair (ground copy k, state n outside the ground space) gives a line at
 * E_n - E_0 of weight |<n|O|k>|^2, averaged over the copies. On the real embedding each complex
 * state appears twice (u and i u), in the ground space and outside it alike, so summing the squared
 * real overlaps over embedded n and dividing by the embedded ground count gives the same average.
 */
function lehmann(
  hRe: number[][],
  hIm: number[][],
  oRe: number[][],
  oIm: number[][],
  tolerance: number,
): { lines: { position: number; weight: number }[]; elastic: number; copies: number } {
  const D = hRe.length;
  const { values, vectors } = embeddedEigen(hRe, hIm);
  const e0 = values[0];
  const window = levelWindow(e0, tolerance);
  const ground = values.map((e, k) => [e, k] as const).filter(([e]) => e - e0 <= window);
  const apply = (v: number[]) => {
    const out = new Array<number>(2 * D).fill(0);
    for (let r = 0; r < D; r++)
      for (let c = 0; c < D; c++) {
        out[r] += oRe[r][c] * v[c] - oIm[r][c] * v[c + D];
        out[r + D] += oIm[r][c] * v[c] + oRe[r][c] * v[c + D];
      }
    return out;
  };
  const lines: { position: number; weight: number }[] = [];
  let elastic = 0;
  for (const [, k] of ground) {
    const ov = apply(vectors[k]);
    values.forEach((e, n) => {
      let d = 0;
      for (let s = 0; s < 2 * D; s++) d += vectors[n][s] * ov[s];
      const w = (d * d) / ground.length;
      if (e - e0 <= window) elastic += w;
      else lines.push({ position: e - e0, weight: w });
    });
  }
  return { lines, elastic, copies: ground.length / 2 };
}

describe('one molecule (chain.sites = 1)', () => {
  it('puts a drive on link l at the ladder eigenvalue differences with weights from dense eigenvectors', () => {
    const r = rng(7);
    for (let trial = 0; trial < 4; trial++) {
      const N = 3 + trial;
      const tunnelling = Array.from({ length: N - 1 }, () => 0.3 + r());
      const phase = Array.from({ length: N - 1 }, () => (r() - 0.5) * 3);
      const detuning = Array.from({ length: N }, () => r() - 0.5);
      const link = trial % (N - 1);
      const probePhase = 0.7 * trial;
      const s = run({
        chain: { sites: 1 },
        levels: { count: N, tunnelling, phase, detuning },
        solve: { tolerance: 1e-11 },
        spectrum: {
          probe: { link, phase: probePhase },
          frequencies: { from: 0, to: 6, steps: 61 },
          broadening: 0.05,
          lines: 20,
        },
      });
      // h from docs/model.md: <l+1|h|l> = -J_l e^{i phi_l}, detuning on the diagonal.
      const hRe = Array.from({ length: N }, (_, a) => Array.from({ length: N }, (_, b) => (a === b ? detuning[a] : 0)));
      const hIm = Array.from({ length: N }, () => new Array<number>(N).fill(0));
      tunnelling.forEach((J, l) => {
        hRe[l + 1][l] += -J * Math.cos(phase[l]);
        hIm[l + 1][l] += -J * Math.sin(phase[l]);
        hRe[l][l + 1] += -J * Math.cos(phase[l]);
        hIm[l][l + 1] -= -J * Math.sin(phase[l]);
      });
      // O = e^{i phase} |l+1><l| + h.c.
      const oRe = Array.from({ length: N }, () => new Array<number>(N).fill(0));
      const oIm = Array.from({ length: N }, () => new Array<number>(N).fill(0));
      oRe[link + 1][link] = Math.cos(probePhase);
      oIm[link + 1][link] = Math.sin(probePhase);
      oRe[link][link + 1] = Math.cos(probePhase);
      oIm[link][link + 1] = -Math.sin(probePhase);
      const ref = lehmann(hRe, hIm, oRe, oIm, 1e-11);
      const expected = mergeLines(ref.lines, 1e-7).filter((l) => l.weight > 1e-12);
      expect(s.lines.length).toBe(expected.length);
      s.lines.forEach((l, k) => {
        expect(l.position).toBeCloseTo(expected[k].position, 8);
        expect(l.weight).toBeCloseTo(expected[k].weight, 8);
      });
      expect(s.elastic_weight).toBeCloseTo(ref.elastic, 9);
    }
  });

  it('a dressed two-level molecule: a probe in quadrature has one line at 2J of weight 1, one in phase none (Autler-Townes; common practice)', () => {
    for (const J of [0.5, 1, 2.5]) {
      const base = {
        chain: { sites: 1 },
        levels: { count: 2, tunnelling: J },
        spectrum: { frequencies: { from: 0, to: 6 * J, steps: 101 }, broadening: 0.05 * J },
      };
      const quadrature = run({ ...base, spectrum: { ...base.spectrum, probe: { link: 0, phase: Math.PI / 2 } } });
      expect(quadrature.lines).toHaveLength(1);
      expect(quadrature.lines[0].position).toBeCloseTo(2 * J, 10);
      expect(quadrature.lines[0].weight).toBeCloseTo(1, 10);
      expect(quadrature.weight).toBeCloseTo(1, 10);
      expect(quadrature.elastic_weight).toBeCloseTo(0, 10);
      const inPhase = run({ ...base, spectrum: { ...base.spectrum, probe: { link: 0 } } });
      expect(inPhase.lines).toHaveLength(0);
      expect(inPhase.weight).toBeLessThan(1e-12);
      expect(inPhase.elastic_weight).toBeCloseTo(1, 10);
      expect(Math.max(...inPhase.intensity)).toBeLessThan(1e-10);
    }
  });
});

// ---------------------------------------------------------------------------------------------
// Random small specs of every kind against the Lehmann sum over the dense spectrum.

describe('against the Lehmann sum over the dense spectrum (ml-matrix), every kind', () => {
  for (const kind of ['pinned', 'hardcore', 'boson', 'fermion'] as const) {
    it(`${kind}: the curve to 1e-8 of its peak, the weights and the elastic part`, () => {
      let done = 0;
      let degenerate = 0;
      let zeroes = 0;
      for (let seed = 1; done < 10 && seed < 400; seed++) {
        const c = randomCase(1000 * seed + kind.length, kind);
        if (!c) continue;
        done++;
        const h = buildDense(c.model);
        const D = h.dim;
        const hRe = Array.from({ length: D }, (_, r) => Array.from(h.re.subarray(r * D, (r + 1) * D)));
        const hIm = Array.from({ length: D }, (_, r) => Array.from(h.im.subarray(r * D, (r + 1) * D)));
        const o = denseProbe(c, h.configs);
        const ref = lehmann(hRe, hIm, o.re, o.im, 1e-11);
        if (ref.copies > 1) degenerate++;
        const s = run(c.raw);
        const context = JSON.stringify(c.raw);
        expect(s.ground_copies, context).toBe(ref.copies);
        const expected = s.frequencies.map((f) =>
          ref.lines.reduce((a, l) => a + l.weight * lorentzian(f - l.position, 0.08), 0),
        );
        const weight = ref.lines.reduce((a, l) => a + l.weight, 0);
        const worst = Math.max(0, ...expected.map((e, k) => Math.abs(e - s.intensity[k])));
        // A probe whose lines all vanish (it maps the ground space into itself) leaves only rounding
        // in the reference: then the curve must be zero against the elastic weight's peak height.
        const peak =
          weight > 1e-12 * (weight + ref.elastic) ? Math.max(...expected) : (weight + ref.elastic) / (Math.PI * 0.08);
        if (weight <= 1e-12 * (weight + ref.elastic)) zeroes++;
        expect(worst / peak, context).toBeLessThan(1e-8);
        expect(Math.abs(s.weight - weight), context).toBeLessThan(1e-9 * Math.max(1, weight));
        expect(Math.abs(s.elastic_weight - ref.elastic), context).toBeLessThan(1e-9 * Math.max(1, ref.elastic));
        expect(s.continued_fraction.converged).toBe(true);
      }
      expect(done).toBe(10);
      // The cases include degenerate ground levels, and probes without lines, for some kinds.
      if (process.env.SPECTRUM_TALLY) console.log(kind, { degenerate, zeroes });
    });
  }
});

describe('on a lattice', () => {
  it('a probe at lattice momentum [mx, my] on a square array with a vacancy, against the Lehmann sum', () => {
    // Lattice sites x + 3 y of a 3 x 2 square, site 4 vacant: model sites keep the lattice's coordinates.
    const lattice = { shape: 'square' as const, size: [3, 2], vacancies: [4] };
    const raw: Raw = {
      lattice,
      levels: { count: 2, tunnelling: [0.7], phase: [0.4], detuning: [0, 0.3] },
      exchange: { strength: 1.1, range: 'dipolar' },
      ising: { strength: 0.5, moments: [0.5, -0.3], range: 'nearest' },
      solve: { tolerance: 1e-11 },
      spectrum: {
        probe: { link: 0, phase: 0.9, momentum: [1, 1] },
        frequencies: { from: 0, to: 8, steps: 161 },
        broadening: 0.1,
      },
    };
    const model = describeCase(raw, 'pinned');
    const { xyz } = referenceSites(lattice);
    const c: RandomCase = { raw, model, probe: raw.spectrum.probe };
    const h = buildDense(model);
    const D = h.dim;
    const o = denseProbe(c, h.configs, (i) => (2 * Math.PI * xyz[i][0]) / 3 + (2 * Math.PI * xyz[i][1]) / 2);
    const ref = lehmann(
      Array.from({ length: D }, (_, r) => Array.from(h.re.subarray(r * D, (r + 1) * D))),
      Array.from({ length: D }, (_, r) => Array.from(h.im.subarray(r * D, (r + 1) * D))),
      o.re,
      o.im,
      1e-11,
    );
    const s = run(raw);
    const expected = s.frequencies.map((f) =>
      ref.lines.reduce((a, l) => a + l.weight * lorentzian(f - l.position, 0.1), 0),
    );
    const peak = Math.max(...expected);
    expect(peak).toBeGreaterThan(0.1);
    expect(Math.max(...expected.map((e, k) => Math.abs(e - s.intensity[k]))) / peak).toBeLessThan(1e-8);
    expect(s.elastic_weight).toBeCloseTo(ref.elastic, 9);
  });
});

describe('the open XX chain (free fermions; Lieb, Schultz and Mattis 1961)', () => {
  it("the level-1 population at momentum q has lines at 2V (cos k' - cos k) with weights from the single-particle wave functions", () => {
    const L = 6;
    const V = 0.8;
    for (const m of [0, 1, 2]) {
      const s = run({
        chain: { sites: L },
        levels: { count: 2, tunnelling: 0 },
        exchange: { strength: V },
        solve: { tolerance: 1e-11 },
        spectrum: {
          probe: { level: 1, momentum: m },
          frequencies: { from: 0, to: 4 * V, steps: 81 },
          broadening: 0.05,
          lines: 100,
        },
      });
      // V (a+_{i,1} a_{i,0} a+_{j,0} a_{j,1} + h.c.) moves a level-1 excitation: by Jordan-Wigner,
      // fermions hopping with amplitude V: eps_k = 2V cos k, k = pi p / (L+1), phi_k(j) = sqrt(2/(L+1)) sin(k (j+1)).
      const ks = Array.from({ length: L }, (_, p) => (Math.PI * (p + 1)) / (L + 1));
      const eps = ks.map((k) => 2 * V * Math.cos(k));
      const phi = (k: number, j: number) => Math.sqrt(2 / (L + 1)) * Math.sin(k * (j + 1));
      const filled = ks.filter((_, p) => eps[p] < 0);
      const empty = ks.filter((_, p) => eps[p] > 0);
      const q = (2 * Math.PI * m) / L;
      const lines: { position: number; weight: number }[] = [];
      for (const k of filled)
        for (const kp of empty) {
          let re = 0;
          let im = 0;
          for (let j = 0; j < L; j++) {
            re += Math.cos(q * j) * phi(kp, j) * phi(k, j);
            im += Math.sin(q * j) * phi(kp, j) * phi(k, j);
          }
          lines.push({ position: 2 * V * (Math.cos(kp) - Math.cos(k)), weight: re * re + im * im });
        }
      const expected = mergeLines(lines, 1e-9).filter((l) => l.weight > 1e-12);
      expect(s.lines.length).toBe(expected.length);
      s.lines.forEach((l, k) => {
        expect(l.position).toBeCloseTo(expected[k].position, 8);
        expect(l.weight).toBeCloseTo(expected[k].weight, 8);
      });
      // <0|O|0> = sum_j e^{iqj} <n_j>, <n_j> = sum over filled k of phi_k(j)^2
      let er = 0;
      let ei = 0;
      for (let j = 0; j < L; j++) {
        const n = filled.reduce((a, k) => a + phi(k, j) ** 2, 0);
        er += Math.cos(q * j) * n;
        ei += Math.sin(q * j) * n;
      }
      expect(s.elastic_weight).toBeCloseTo(er * er + ei * ei, 8);
    }
  });
});

describe('line shapes', () => {
  it('Lorentzian and Gaussian together give the Voigt profile: against composite Simpson quadrature of the convolution', () => {
    // One line of weight 1 at 2J (the dressed two-level molecule probed in quadrature; Autler-Townes).
    const J = 1;
    const eta = 0.05;
    const gamma = 0.1; // Gaussian half width at half maximum: sigma = gamma / sqrt(2 ln 2)
    const s = run({
      chain: { sites: 1 },
      levels: { count: 2, tunnelling: J },
      spectrum: {
        probe: { link: 0, phase: Math.PI / 2 },
        frequencies: { from: 1, to: 3, steps: 81 },
        broadening: { lorentzian: eta, gaussian: gamma },
      },
    });
    const sigma = gamma / Math.sqrt(2 * Math.LN2);
    // V(x) = integral G(t) L(x - t) dt, the convolution written out (common practice), by composite
    // Simpson over |t| <= 10 sigma with 40000 intervals.
    const voigt = (x: number) => {
      const n = 40000;
      const a = -10 * sigma;
      const h = (20 * sigma) / n;
      let sum = 0;
      for (let k = 0; k <= n; k++) {
        const t = a + k * h;
        const g = Math.exp((-0.5 * t * t) / (sigma * sigma)) / (sigma * Math.sqrt(2 * Math.PI));
        const f = g * lorentzian(x - t, eta);
        sum += f * (k === 0 || k === n ? 1 : k % 2 === 1 ? 4 : 2);
      }
      return (sum * h) / 3;
    };
    const expected = s.frequencies.map((f) => voigt(f - 2 * J));
    const peak = Math.max(...expected);
    expected.forEach((e, k) => expect(Math.abs(e - s.intensity[k]) / peak).toBeLessThan(1e-9));
    // The window [1, 3] around the line at 2: integral of V over it = integral G(t) (F(1 - t) - F(-1 - t)) dt,
    // F(u) = atan(u / eta) / pi the Lorentzian's integral, by the same Simpson rule.
    const n = 40000;
    const a = -10 * sigma;
    const step = (20 * sigma) / n;
    let inside = 0;
    for (let k = 0; k <= n; k++) {
      const t = a + k * step;
      const g = Math.exp((-0.5 * t * t) / (sigma * sigma)) / (sigma * Math.sqrt(2 * Math.PI));
      const f = (g * (Math.atan((1 - t) / eta) - Math.atan((-1 - t) / eta))) / Math.PI;
      inside += f * (k === 0 || k === n ? 1 : k % 2 === 1 ? 4 : 2);
    }
    expect(s.window_weight).toBeCloseTo((inside * step) / 3, 9);
    let integral = 0;
    const h = s.frequencies[1] - s.frequencies[0];
    for (let k = 0; k + 1 < s.frequencies.length; k++) integral += (h * (s.intensity[k] + s.intensity[k + 1])) / 2;
    expect(Math.abs(integral - s.window_weight)).toBeLessThan(2e-3);
  });
});

describe('frequency units', () => {
  it('kHz with [units]: positions and widths times the energy unit in kHz, intensity per kHz, weights unchanged', () => {
    const base: Raw = {
      chain: { sites: 3 },
      levels: { count: 3, tunnelling: [1, 0.5] },
      exchange: { strength: 0.7 },
      units: { energy_unit_hz: 2500 },
    };
    const model = run({
      ...base,
      spectrum: { probe: { link: 1 }, frequencies: { to: 4, steps: 41 }, broadening: 0.1 },
    });
    const khz = run({
      ...base,
      spectrum: { probe: { link: 1 }, frequencies: { to: 10, steps: 41 }, broadening: 0.25, frequency_unit: 'khz' },
    });
    // E / h in kHz = E * energy_unit_hz / 1000 (docs/model.md, [units])
    expect(khz.lines.map((l) => l.position / 2.5)).toEqual(model.lines.map((l) => expect.closeTo(l.position, 10)));
    expect(khz.lines.map((l) => l.weight)).toEqual(model.lines.map((l) => expect.closeTo(l.weight, 10)));
    khz.intensity.forEach((x, k) => expect(x * 2.5).toBeCloseTo(model.intensity[k], 10));
  });
});

describe('sum rules', () => {
  it('the integrated curve equals the printed weight; the poles carry it all', () => {
    const base: Raw = {
      chain: { sites: 4, boundary: 'periodic' },
      levels: { count: 3, tunnelling: [1, 0.7], detuning: [0, 0.2, -0.1] },
      exchange: { strength: 0.9 },
      spectrum: { probe: { link: 1, momentum: 1 }, frequencies: { from: -2, to: 12, steps: 14001 } },
    };
    // A Gaussian's tails beyond 10 half widths are below 1e-20: the window holds the whole curve.
    const s = run({ ...base, spectrum: { ...base.spectrum, broadening: { gaussian: 0.05 } } });
    let integral = 0;
    const h = s.frequencies[1] - s.frequencies[0];
    for (let k = 0; k + 1 < s.frequencies.length; k++) integral += (h * (s.intensity[k] + s.intensity[k + 1])) / 2;
    expect(s.weight).toBeGreaterThan(0.1);
    expect(Math.abs(integral - s.weight)).toBeLessThan(1e-6 * s.weight);
    expect(Math.abs(s.lines_weight - s.weight)).toBeLessThan(1e-10 * s.weight);
    expect(Math.abs(s.window_weight - s.weight)).toBeLessThan(1e-6 * s.weight);
    // and <O+ O> = weight + elastic weight
    expect(s.total_weight).toBeCloseTo(s.weight + s.elastic_weight, 10);
  });

  it('the plain three-term recurrence of large spaces gives the curve of the fully orthogonalized one', () => {
    const base: Raw = {
      chain: { sites: 7 },
      levels: { count: 3, tunnelling: [1, 0.6] },
      exchange: { strength: 1.3 },
      solve: { symmetries: 'none' },
      spectrum: { probe: { link: 0 }, frequencies: { from: 0, to: 8, steps: 161 }, broadening: 0.2 },
    };
    // 3^7 states: 600 kept vectors would pass FULL_ORTHOGONALIZATION_DOUBLES (2^20 doubles), 400 do not.
    const plain = run({ ...base, spectrum: { ...base.spectrum, max_levels: 600 } });
    const full = run({ ...base, spectrum: { ...base.spectrum, max_levels: 400 } });
    expect(plain.continued_fraction.orthogonalization).toBe('none');
    expect(full.continued_fraction.orthogonalization).toBe('full');
    const peak = Math.max(...full.intensity);
    const worst = Math.max(...full.intensity.map((x, k) => Math.abs(x - plain.intensity[k])));
    expect(worst / peak).toBeLessThan(1e-5);
    expect(plain.continued_fraction.converged).toBe(true);
  });
});

describe('lines of an unfinished continued fraction', () => {
  it('each listed line lies within its Ritz residual of an excitation energy of the dense spectrum (Paige; ml-matrix)', () => {
    const L = 5;
    const N = 3;
    const raw: Raw = {
      chain: { sites: L },
      levels: { count: N, tunnelling: [1, 0.6], detuning: [0, 0.2, -0.3] },
      exchange: { strength: 1.3 },
      solve: { tolerance: 1e-11, symmetries: 'none' },
      // 24 levels of a 243-state space: most lines are not converged yet
      spectrum: { probe: { link: 0 }, frequencies: { to: 8, steps: 81 }, broadening: 0.1, max_levels: 24, lines: 24 },
    };
    const s = run(raw);
    expect(s.continued_fraction.exact).toBe(false);
    const model: ModelDescription = {
      sites: L,
      periodic: false,
      levels: N,
      ring: false,
      tunnelling: [1, 0.6],
      phase: [0, 0],
      detuning: [0, 0.2, -0.3],
      exchange: 1.3,
      exchangeRange: 'nearest',
      exchangeCutoff: null,
      weights: [1, 1],
      ising: 0,
      moments: [0, 0, 0],
      isingRange: 'nearest',
      isingCutoff: null,
      kind: 'pinned',
      particles: L,
      hopping: 0,
      maxPerSite: 1,
      onsite: 0,
    };
    const h = buildDense(model);
    const D = h.dim;
    const m = new Matrix(D, D);
    for (let r = 0; r < D; r++) for (let c = 0; c < D; c++) m.set(r, c, h.re[r * D + c]);
    const values = new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
    for (const line of s.lines) {
      const nearest = Math.min(...values.map((e) => Math.abs(e - values[0] - line.position)));
      expect(nearest).toBeLessThanOrEqual(line.residual + 1e-9);
    }
    if (process.env.SPECTRUM_TALLY) console.log(s.lines.map((l) => l.residual));
    // converged lines and unconverged ones: the bound is tested on both
    expect(s.lines.some((l) => l.residual < 1e-4)).toBe(true);
    expect(s.lines.some((l) => l.residual > 1e-2)).toBe(true);
  });
});

describe('in symmetry sectors', () => {
  it('the parts of O|0> in the sectors it reaches give the full-space spectrum (pinned chains and a lattice)', () => {
    const r = rng(2026);
    const cases: Raw[] = [];
    for (let k = 0; k < 10; k++) {
      const L = 3 + Math.floor(r() * 4);
      const N = 2 + Math.floor(r() * 2);
      // charge-conserving chains (no tunnelling) and translation-invariant ones with drives
      const charge = r() < 0.4;
      const probe: Raw =
        r() < 0.5
          ? { link: Math.floor(r() * (N - 1)), phase: r() < 0.5 ? 0 : 1.1, momentum: Math.floor(r() * L) }
          : r() < 0.5
            ? { level: Math.floor(r() * N), momentum: Math.floor(r() * L) }
            : { coordinate: true, momentum: Math.floor(r() * L) };
      cases.push({
        chain: { sites: L, boundary: r() < 0.7 ? 'periodic' : 'open' },
        levels: {
          count: N,
          tunnelling: charge ? 0 : 0.4 + r(),
          phase: !charge && r() < 0.3 ? 0.7 : 0,
          detuning: Array.from({ length: N }, () => (r() < 0.5 ? 0 : r() - 0.5)),
        },
        exchange: { strength: 0.5 + r() },
        ising: { strength: r() < 0.5 ? 0 : 0.6, moments: Array.from({ length: N }, (_, n) => n - (N - 1) / 2) },
        solve: { tolerance: 1e-11 },
        spectrum: { probe, frequencies: { from: -1, to: 10, steps: 221 }, broadening: 0.1, lines: 1000 },
      });
    }
    cases.push({
      lattice: { shape: 'square', size: [3, 2], boundary: ['periodic', 'open'] },
      levels: { count: 2, tunnelling: 0.8 },
      exchange: { strength: 1.2, range: 'dipolar' },
      solve: { tolerance: 1e-11 },
      spectrum: {
        probe: { link: 0, momentum: [1, 1] },
        frequencies: { from: -1, to: 10, steps: 221 },
        broadening: 0.1,
      },
    });
    let inSectors = 0;
    for (const raw of cases) {
      const sectors = run(raw);
      const full = run({ ...raw, solve: { ...raw.solve, symmetries: 'none' } });
      const context = JSON.stringify(raw);
      if (sectors.continued_fraction.sectors !== null) inSectors++;
      expect(full.continued_fraction.sectors).toBeNull();
      const peak = Math.max(...full.intensity, (full.weight + full.elastic_weight) * 1e-6);
      const worst = Math.max(...full.intensity.map((x, k) => Math.abs(x - sectors.intensity[k])));
      expect(worst / peak, context).toBeLessThan(1e-8);
      expect(sectors.weight).toBeCloseTo(full.weight, 9);
      expect(sectors.elastic_weight).toBeCloseTo(full.elastic_weight, 9);
    }
    expect(inSectors).toBeGreaterThanOrEqual(8);
  });
});
