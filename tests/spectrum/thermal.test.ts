// Finite-temperature spectra (issue 22) against outside sources: the Boltzmann-weighted Lehmann sum
// over the dense spectrum (ml-matrix) of the plain build of docs/model.md on random small specs of
// every kind, detailed balance A(-omega) = e^{-omega/T} A(omega) for a Hermitian probe (common
// practice), the T -> 0 limit, the sum rule, and one 2-level molecule in closed form.

import { describe, expect, it } from 'vitest';
import { computeSpectrum } from '../../src/spectrum/spectrum.js';
import { validateSpec } from '../../src/spec/spec.js';
import { buildDense, levelWindow, type Kind } from '../support/occupationReference.js';
import { denseProbe, embeddedEigen, lorentzian, randomCase, type RandomCase } from '../support/spectrumReference.js';
import { rng } from '../support/random.js';

type Raw = Record<string, any>;

const run = (raw: Raw) => computeSpectrum(validateSpec(JSON.parse(JSON.stringify(raw)) as Raw)).spectrum;

const ETA = 0.08;

/**
 * The Lehmann sum at temperature T: every pair (m, n) gives a line at E_n - E_m of weight
 * e^{-(E_m - E_0)/T} |<n|O|m>|^2 / Z; pairs within one level (the degeneracy window) are the
 * elastic part. On the real embedding each complex state appears twice (u and i u): summing the
 * squared real overlaps over embedded n gives |<n|O|m>|^2, and the doubled m copies cancel against
 * the doubled Z.
 */
function thermalLehmann(c: RandomCase, T: number) {
  const h = buildDense(c.model);
  const D = h.dim;
  const hRe = Array.from({ length: D }, (_, r) => Array.from(h.re.subarray(r * D, (r + 1) * D)));
  const hIm = Array.from({ length: D }, (_, r) => Array.from(h.im.subarray(r * D, (r + 1) * D)));
  const o = denseProbe(c, h.configs);
  const { values, vectors } = embeddedEigen(hRe, hIm);
  const e0 = values[0];
  const window = levelWindow(e0, 0);
  const boltzmann = values.map((e) => Math.exp(-(e - e0) / T));
  const z = boltzmann.reduce((a, b) => a + b, 0);
  const apply = (v: number[]) => {
    const out = new Array<number>(2 * D).fill(0);
    for (let r = 0; r < D; r++)
      for (let col = 0; col < D; col++) {
        out[r] += o.re[r][col] * v[col] - o.im[r][col] * v[col + D];
        out[r + D] += o.im[r][col] * v[col] + o.re[r][col] * v[col + D];
      }
    return out;
  };
  const lines: { position: number; weight: number }[] = [];
  let elastic = 0;
  let total = 0;
  values.forEach((em, m) => {
    const p = boltzmann[m] / z;
    const ov = apply(vectors[m]);
    total += p * ov.reduce((a, x) => a + x * x, 0);
    values.forEach((en, n) => {
      let d = 0;
      for (let s = 0; s < 2 * D; s++) d += vectors[n][s] * ov[s];
      const w = p * d * d;
      if (Math.abs(en - em) <= window) elastic += w;
      else lines.push({ position: en - em, weight: w });
    });
  });
  return { lines, elastic, total };
}

function thermalCase(seed: number, kind: Kind): (RandomCase & { T: number }) | null {
  const c = randomCase(seed, kind);
  if (!c) return null;
  const r = rng(seed + 17);
  const T = 0.2 + 1.8 * r();
  c.raw.spectrum.frequencies = { from: -6, to: 6, steps: 241 };
  c.raw.spectrum.temperature = T;
  c.raw.spectrum.broadening = ETA;
  return { ...c, T };
}

describe('against the Lehmann sum at temperature T over the dense spectrum (ml-matrix), every kind', () => {
  for (const kind of ['pinned', 'hardcore', 'boson', 'fermion'] as const) {
    it(`${kind}: the exact method to 1e-8 of the peak, its weights and elastic part; Lanczos within its error bars`, () => {
      let done = 0;
      for (let seed = 1; done < 6 && seed < 400; seed++) {
        const c = thermalCase(3000 * seed + kind.length, kind);
        if (!c) continue;
        done++;
        const ref = thermalLehmann(c, c.T);
        const context = JSON.stringify(c.raw);
        const expected = (f: number) => ref.lines.reduce((a, l) => a + l.weight * lorentzian(f - l.position, ETA), 0);
        c.raw.spectrum.method = 'exact';
        const s = run(c.raw);
        expect(s.method).toBe('exact');
        const want = s.frequencies.map(expected);
        const peak = Math.max(...want, (ref.total + 1e-300) / (Math.PI * ETA) / 1e6);
        const worst = Math.max(0, ...want.map((e, k) => Math.abs(e - s.intensity[k])));
        expect(worst / peak, context).toBeLessThan(1e-8);
        const weight = ref.lines.reduce((a, l) => a + l.weight, 0);
        expect(Math.abs(s.weight - weight), context).toBeLessThan(1e-9 * Math.max(1, weight));
        expect(Math.abs(s.elastic_weight - ref.elastic), context).toBeLessThan(1e-9 * Math.max(1, ref.elastic));
        expect(Math.abs(s.total_weight - ref.total), context).toBeLessThan(1e-9 * Math.max(1, ref.total));
        expect(s.intensity_error.every((e) => e === 0)).toBe(true);

        // The Lanczos method: chains as long as the space, so only the random trace errs. Compared
        // with the elastic part drawn at omega = 0 on both sides (the method splits it off only
        // where Ritz values of its two chains agree).
        c.raw.spectrum.method = 'lanczos';
        c.raw.spectrum.vectors = 24;
        const l = run(c.raw);
        expect(l.method).toBe('lanczos');
        const full = (x: number[], elastic: number) => x.map((v, k) => v + elastic * lorentzian(s.frequencies[k], ETA));
        const wantFull = full(want, ref.elastic);
        const gotFull = full(l.intensity, l.elastic_weight);
        const fullPeak = Math.max(...wantFull);
        let outside = 0;
        wantFull.forEach((w, k) => {
          const bar = 4 * (l.intensity_error[k] + l.elastic_weight_error * lorentzian(s.frequencies[k], ETA));
          if (Math.abs(gotFull[k] - w) > bar + 1e-7 * fullPeak) outside++;
        });
        if (process.env.SPECTRUM_TALLY)
          console.log(kind, {
            dim: s.dimension,
            sectors: s.continued_fraction.sectors?.length ?? null,
            copies: s.ground_copies,
            elastic: ref.elastic,
            exactWorst: worst / peak,
            lanczosBar: Math.max(...l.intensity_error) / fullPeak,
            lanczosWorst: Math.max(...wantFull.map((w, k) => Math.abs(gotFull[k] - w))) / fullPeak,
            outside,
          });
        // a 4-sigma band: a frequency or two of 241 may stray, not a run of them
        expect(outside, context).toBeLessThanOrEqual(3);
        expect(Math.abs(l.total_weight - ref.total), context).toBeLessThan(4 * l.total_weight_error + 1e-7 * ref.total);
      }
      expect(done).toBe(6);
    });
  }
});

describe('finite-temperature Lanczos on a space larger than its chains', () => {
  it('729 states, 100 steps per chain: the whole curve within 4 error bars of the exact method', () => {
    // A periodic 6 x 3 chain with every term on, probed at momentum 1: the chains hold 100 of 729
    // states, so truncation adds to the random error; the exact method (every eigenpair per
    // sector) is the reference, itself checked against the dense Lehmann sum above.
    const eta = 0.15;
    const raw = (method: string) => ({
      chain: { sites: 6, boundary: 'periodic' },
      levels: { count: 3, tunnelling: 1, detuning: [0, 0.3, -0.2] },
      exchange: { strength: 1.1 },
      ising: { strength: 0.4, moments: [1, -0.5, 0.3] },
      solve: { tolerance: 1e-10 },
      spectrum: {
        probe: { level: 1, momentum: 1 },
        frequencies: { from: -6, to: 6, steps: 121 },
        broadening: eta,
        temperature: 2,
        method,
        vectors: 30,
      },
    });
    const exact = run(raw('exact'));
    const lanczos = run(raw('lanczos'));
    expect(lanczos.dimension).toBe(729);
    const whole = (s: typeof exact) =>
      s.intensity.map((x, k) => x + s.elastic_weight * lorentzian(s.frequencies[k], eta));
    const want = whole(exact);
    const got = whole(lanczos);
    const peak = Math.max(...want);
    want.forEach((w, k) => {
      const bar = lanczos.intensity_error[k] + lanczos.elastic_weight_error * lorentzian(exact.frequencies[k], eta);
      expect(Math.abs(got[k] - w)).toBeLessThan(4 * bar + 1e-9 * peak);
    });
    expect(Math.abs(lanczos.total_weight - exact.total_weight)).toBeLessThan(4 * lanczos.total_weight_error);
  });
});

describe('detailed balance and sum rules (common practice)', () => {
  it('a Hermitian probe: every line at -omega carries e^{-omega/T} of the weight at +omega (exact method)', () => {
    let done = 0;
    for (let seed = 1; done < 8 && seed < 400; seed++) {
      const c = thermalCase(7000 * seed + 3, (['pinned', 'hardcore', 'boson', 'fermion'] as const)[seed % 4]);
      if (!c) continue;
      // momentum 0 on every site or a list of sites: O is Hermitian (a drive with its h.c., or a population)
      delete c.probe.momentum;
      delete c.raw.spectrum.probe.momentum;
      c.raw.spectrum.lines = 100000;
      done++;
      const s = run(c.raw);
      const context = JSON.stringify(c.raw);
      const within = 1e-7;
      for (const line of s.lines.filter((x) => x.position > within)) {
        const mirror = s.lines.filter((x) => Math.abs(x.position + line.position) <= within);
        const w = mirror.reduce((a, x) => a + x.weight, 0);
        expect(Math.abs(w - Math.exp(-line.position / c.T) * line.weight), context).toBeLessThan(1e-10);
      }
      // the integrated curve (every line) is <O+ O>_T less the elastic part
      expect(Math.abs(s.lines_weight - (s.total_weight - s.elastic_weight)), context).toBeLessThan(1e-10);
      expect(Math.abs(s.weight - s.lines_weight), context).toBeLessThan(1e-10);
    }
    expect(done).toBe(8);
  });

  it('T -> 0 recovers the zero-temperature spectrum (exact and Lanczos methods)', () => {
    let done = 0;
    for (let seed = 1; done < 6 && seed < 400; seed++) {
      const kind = (['pinned', 'hardcore', 'boson', 'fermion'] as const)[seed % 4];
      const c = randomCase(9000 * seed + 5, kind);
      if (!c) continue;
      done++;
      const cold = run(c.raw);
      // a temperature far below the gap: e^{-gap/T} below 1e-30
      const h = buildDense(c.model);
      const D = h.dim;
      const hRe = Array.from({ length: D }, (_, r) => Array.from(h.re.subarray(r * D, (r + 1) * D)));
      const hIm = Array.from({ length: D }, (_, r) => Array.from(h.im.subarray(r * D, (r + 1) * D)));
      const { values } = embeddedEigen(hRe, hIm);
      const gap = values.find((e) => e - values[0] > levelWindow(values[0], 0))! - values[0];
      for (const method of ['exact', 'lanczos']) {
        const raw = JSON.parse(JSON.stringify(c.raw));
        raw.spectrum.temperature = gap / 70;
        raw.spectrum.method = method;
        const s = run(raw);
        const context = `${method} ${JSON.stringify(raw)}`;
        const peak = Math.max(...cold.intensity.map(Math.abs), cold.total_weight / (Math.PI * 0.08) / 1e6);
        const worst = Math.max(...s.intensity.map((x, k) => Math.abs(x - cold.intensity[k])));
        expect(worst / peak, context).toBeLessThan(1e-7);
        expect(Math.abs(s.weight - cold.weight), context).toBeLessThan(1e-9 * Math.max(1, cold.weight));
        expect(Math.abs(s.elastic_weight - cold.elastic_weight), context).toBeLessThan(1e-9);
        expect(s.ground_copies, context).toBe(cold.ground_copies);
      }
    }
    expect(done).toBe(6);
  });
});

describe('one 2-level molecule at temperature T', () => {
  it('a drive in quadrature: lines at +-(E+ - E-) with the two levels Boltzmann weights (closed form)', () => {
    // H = [[0, -J], [-J, delta]] on levels 0, 1 (docs/model.md: tunnelling -J (a+_1 a_0 + h.c.),
    // detuning delta on level 1). Its levels E+- = delta/2 +- sqrt(delta^2/4 + J^2), eigenvectors
    // (cos t, sin t) and (-sin t, cos t); the probe i a+_1 a_0 - i a+_0 a_1 connects them with
    // |<+|O|->|^2 = 1 (O = sigma_y is off-diagonal with unit modulus between any real orthonormal pair).
    const J = 0.7;
    const delta = 0.4;
    const T = 0.5;
    const split = 2 * Math.sqrt((delta * delta) / 4 + J * J);
    const pLow = 1 / (1 + Math.exp(-split / T));
    const pHigh = 1 - pLow;
    const raw = {
      chain: { sites: 1 },
      levels: { count: 2, tunnelling: J, detuning: [0, delta] },
      spectrum: {
        probe: { link: 0, phase: Math.PI / 2 },
        frequencies: { from: -3, to: 3, steps: 61 },
        broadening: 0.05,
        temperature: T,
      },
    };
    const s = run(raw);
    expect(s.lines).toHaveLength(2);
    expect(s.lines[0].position).toBeCloseTo(-split, 12);
    expect(s.lines[1].position).toBeCloseTo(split, 12);
    expect(s.lines[0].weight).toBeCloseTo(pHigh, 12);
    expect(s.lines[1].weight).toBeCloseTo(pLow, 12);
    expect(s.elastic_weight).toBeLessThan(1e-20);
    expect(s.total_weight).toBeCloseTo(1, 12);
    s.frequencies.forEach((f, k) =>
      expect(s.intensity[k]).toBeCloseTo(pLow * lorentzian(f - split, 0.05) + pHigh * lorentzian(f + split, 0.05), 10),
    );
  });

  it('temperature_unit "kHz" with [units]: the same spectrum as k_B T in model units', () => {
    const base = {
      chain: { sites: 1 },
      levels: { count: 2, tunnelling: 1 },
      units: { energy_unit_hz: 2000 },
      spectrum: {
        probe: { link: 0, phase: Math.PI / 2 },
        frequencies: { from: -3, to: 3, steps: 7 },
        temperature: 0.5,
      },
    };
    const model = run(base);
    // k_B T / h = 1 kHz is T = 0.5 in an energy unit of 2 kHz
    const khz = run({ ...base, spectrum: { ...base.spectrum, temperature: 1, temperature_unit: 'kHz' } });
    expect(khz.temperature_model).toBeCloseTo(0.5, 14);
    expect(khz.temperature).toBe(1);
    khz.intensity.forEach((x, k) => expect(x).toBeCloseTo(model.intensity[k], 12));
  });
});
