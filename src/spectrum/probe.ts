// The probe operator of a spectrum (docs/model.md, "Spectra"): a sum of one-site operators
//     O = sum_i c_i M^(i),    c_i = e^{i q . r_i} on the probed sites (0 elsewhere),
// with M one of
//     drive on link l     e^{i phase} a+_{l+1} a_l + e^{-i phase} a+_l a_{l+1}   (l+1 modulo N on a ring)
//     level population n  n_n
//     coordinate          sum_n n n_n
// M acts inside one site's local space, so it is a small matrix over the local states, the same
// on every site. For fermions the Jordan-Wigner strings of a+ and a on the same site cancel on the
// earlier sites, leaving the in-site signs the local tables already carry.

import type { Basis } from '../basis/basis.js';
import { SpecError } from '../errors/errors.js';
import type { Model } from '../model/model.js';
import type { LatticeSpec } from '../spec/lattice.js';
import type { ProbeSpec } from '../spec/spectrumSection.js';

export interface Probe {
  /** The local matrix as its nonzero entries: to[k] <- from[k] with amplitude (re[k], im[k]). */
  from: Int32Array;
  to: Int32Array;
  re: Float64Array;
  im: Float64Array;
  /** Local states of one site. */
  localDim: number;
  /** c_i per model site, interleaved re,im. */
  siteCoefficients: Float64Array;
  /** True when every amplitude and every site coefficient is real. */
  isReal: boolean;
  /** The wave vector q (radians per lattice step, one per lattice direction). */
  wavevector: number[];
}

/** Builds the probe for a model; a site or momentum that does not fit the geometry is a SpecError naming it. */
export function buildProbe(
  probe: ProbeSpec,
  model: Model,
  basis: Basis,
  lattice: LatticeSpec | null,
  path = 'spectrum.probe',
): Probe {
  const L = model.sites;
  const N = model.levels;
  if (probe.sites)
    probe.sites.forEach((s, k) => {
      if (s >= L)
        throw new SpecError(`${path}.sites[${k}]`, `site ${s} does not exist: the model has sites 0..${L - 1}`);
    });
  const { coordinates, sizes } = latticeCoordinates(model, lattice);
  const momentum = typeof probe.momentum === 'number' ? [probe.momentum] : probe.momentum;
  const nonzero = momentum.some((m) => m !== 0);
  if (nonzero && !sizes)
    throw new SpecError(`${path}.momentum`, 'custom positions have no lattice momenta; leave it 0');
  if (sizes && momentum.length !== sizes.length && (nonzero || momentum.length > 1))
    throw new SpecError(
      `${path}.momentum`,
      sizes.length === 1
        ? `a chain takes one integer m (q = 2 pi m / L), got ${momentum.length}`
        : `expected one integer per lattice direction (${sizes.length}), got ${momentum.length}`,
    );
  const wavevector = sizes ? sizes.map((size, d) => (2 * Math.PI * (momentum[d] ?? 0)) / size) : [0];
  const siteCoefficients = new Float64Array(2 * L);
  const probed = probe.sites ?? Array.from({ length: L }, (_, i) => i);
  let isReal = true;
  for (const i of probed) {
    let angle = 0;
    for (let d = 0; d < wavevector.length; d++) angle += wavevector[d] * (coordinates ? coordinates[i][d] : 0);
    // Exact values where they are known, so a q = pi probe stays real.
    const cos = Math.round(Math.cos(angle) * 1e15) / 1e15;
    const sin = Math.round(Math.sin(angle) * 1e15) / 1e15;
    siteCoefficients[2 * i] = cos;
    siteCoefficients[2 * i + 1] = sin;
    if (sin !== 0) isReal = false;
  }
  const entries = localEntries(probe, basis, N);
  if (entries.im.some((x) => x !== 0)) isReal = false;
  return { ...entries, localDim: basis.kind === 'pinned' ? N : basis.local.dim, siteCoefficients, isReal, wavevector };
}

/** Integer lattice coordinates of every model site and the lattice's sizes; null sizes for custom arrays. */
function latticeCoordinates(
  model: Model,
  lattice: LatticeSpec | null,
): { coordinates: number[][] | null; sizes: number[] | null } {
  if (!lattice) return { coordinates: Array.from({ length: model.sites }, (_, i) => [i]), sizes: [model.sites] };
  if (lattice.shape === 'custom') return { coordinates: null, sizes: null };
  const sizes = lattice.size;
  const coordinates = Array.from(model.geometry.latticeIndex, (index) => {
    const xyz: number[] = [];
    let rest = index;
    for (const size of sizes) {
      xyz.push(rest % size);
      rest = Math.floor(rest / size);
    }
    return xyz;
  });
  return { coordinates, sizes };
}

interface LocalEntries {
  from: Int32Array;
  to: Int32Array;
  re: Float64Array;
  im: Float64Array;
}

/** The nonzero entries of the one-site matrix M. */
function localEntries(probe: ProbeSpec, basis: Basis, N: number): LocalEntries {
  const from: number[] = [];
  const to: number[] = [];
  const re: number[] = [];
  const im: number[] = [];
  const add = (t: number, s: number, r: number, i: number) => {
    from.push(s);
    to.push(t);
    re.push(r);
    im.push(i);
  };
  const c = Math.cos(probe.phase);
  const sn = Math.sin(probe.phase);
  if (basis.kind === 'pinned') {
    if (probe.kind === 'drive') {
      const l = probe.link!;
      const up = (l + 1) % N;
      add(up, l, c, sn);
      add(l, up, c, -sn);
    } else
      for (let n = 0; n < N; n++) {
        const value = probe.kind === 'level' ? (n === probe.level ? 1 : 0) : n;
        if (value !== 0) add(n, n, value, 0);
      }
  } else {
    const local = basis.local;
    const d = local.dim;
    // a+_b a_a on local state s: the target and the product of the two in-site amplitudes.
    const hop = (b: number, a: number, s: number): [number, number] | null => {
      const mid = local.annihilateTo[a * d + s];
      if (mid < 0) return null;
      const t = local.createTo[b * d + mid];
      if (t < 0) return null;
      return [t, local.annihilateAmp[a * d + s] * local.createAmp[b * d + mid]];
    };
    for (let s = 0; s < d; s++) {
      if (probe.kind === 'drive') {
        const l = probe.link!;
        const up = (l + 1) % N;
        const raise = hop(up, l, s);
        if (raise) add(raise[0], s, c * raise[1], sn * raise[1]);
        const lower = hop(l, up, s);
        if (lower) add(lower[0], s, c * lower[1], -sn * lower[1]);
      } else {
        let value = 0;
        for (let n = 0; n < N; n++) {
          const occ = local.occupation[s * N + n];
          value += probe.kind === 'level' ? (n === probe.level ? occ : 0) : n * occ;
        }
        if (value !== 0) add(s, s, value, 0);
      }
    }
  }
  return { from: Int32Array.from(from), to: Int32Array.from(to), re: Float64Array.from(re), im: Float64Array.from(im) };
}

/**
 * out = O psi for a state on the full basis: psi real (length dim) or interleaved complex (2 dim);
 * out is interleaved complex (2 dim) and overwritten.
 */
export function applyProbe(probe: Probe, basis: Basis, psi: Float64Array, out: Float64Array): void {
  const dim = basis.dim;
  const complexIn = psi.length === 2 * dim;
  out.fill(0);
  const { from, to, re, im, siteCoefficients: c } = probe;
  const entries = from.length;
  const L = basis.sites;
  // Entries grouped by the local state they leave, so each site looks up only its own.
  const d = probe.localDim;
  const start = new Int32Array(d + 1);
  for (let k = 0; k < entries; k++) start[from[k] + 1]++;
  for (let s = 0; s < d; s++) start[s + 1] += start[s];
  const order = new Int32Array(entries);
  const fill = start.slice(0, d);
  for (let k = 0; k < entries; k++) order[fill[from[k]]++] = k;
  // amplitude of each entry times each site's coefficient, (L x entries) complex
  const ampRe = new Float64Array(L * entries);
  const ampIm = new Float64Array(L * entries);
  const probed: number[] = [];
  for (let i = 0; i < L; i++) {
    const cr = c[2 * i];
    const ci = c[2 * i + 1];
    if (cr === 0 && ci === 0) continue;
    probed.push(i);
    for (let k = 0; k < entries; k++) {
      ampRe[i * entries + k] = cr * re[k] - ci * im[k];
      ampIm[i * entries + k] = cr * im[k] + ci * re[k];
    }
  }
  const deposit = (row: number, target: number, ar: number, ai: number) => {
    const xr = complexIn ? psi[2 * row] : psi[row];
    const xi = complexIn ? psi[2 * row + 1] : 0;
    out[2 * target] += ar * xr - ai * xi;
    out[2 * target + 1] += ar * xi + ai * xr;
  };
  if (basis.kind === 'pinned') {
    const N = basis.levels;
    const digits = new Int32Array(L);
    for (let row = 0; row < dim; row++) {
      if (complexIn ? psi[2 * row] === 0 && psi[2 * row + 1] === 0 : psi[row] === 0) {
        incrementDigits(digits, N);
        continue;
      }
      for (const i of probed) {
        const s = digits[i];
        for (let q = start[s]; q < start[s + 1]; q++) {
          const k = order[q];
          deposit(row, row + (to[k] - s) * basis.strides[i], ampRe[i * entries + k], ampIm[i * entries + k]);
        }
      }
      incrementDigits(digits, N);
    }
    return;
  }
  const cursor = basis.cursor();
  const state = cursor.state;
  const prefix = cursor.prefix;
  const P1 = basis.particles + 1;
  const ranks = basis.rankTable;
  for (let row = 0; row < dim; row++) {
    if (row > 0) cursor.next();
    for (const i of probed) {
      const s = state[i];
      // The probe keeps the particle count of the site, so only this site's term of the rank changes.
      const base = (i * P1 + prefix[i]) * d;
      for (let q = start[s]; q < start[s + 1]; q++) {
        const k = order[q];
        const target = row + ranks[base + to[k]] - ranks[base + s];
        deposit(row, target, ampRe[i * entries + k], ampIm[i * entries + k]);
      }
    }
  }
}

/** The next mixed-radix state, site 0 fastest. */
function incrementDigits(digits: Int32Array, N: number): void {
  for (let i = 0; i < digits.length; i++) {
    if (++digits[i] < N) return;
    digits[i] = 0;
  }
}
