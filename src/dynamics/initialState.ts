// Initial states for time evolution: product states of one level per site, products of per-site
// superpositions made by resonant pulses, and ground states of the spec with some keys changed.

import type { Basis, FockBasis } from '../basis/basis.js';
import { UnsupportedError } from '../errors/errors.js';
import type { Pulse } from '../spec/evolveSection.js';

/**
 * One site's state after starting in `level` and receiving the pulses in order, as N complex
 * amplitudes (interleaved re,im). A pulse between a and b in the rotating frame is
 * H_p = (Omega/2)(e^{i phase}|b><a| + e^{-i phase}|a><b|), so after area A = Omega t:
 *   |a> -> cos(A/2)|a> - i e^{i phase} sin(A/2)|b>,   |b> -> cos(A/2)|b> - i e^{-i phase} sin(A/2)|a>
 * (the Rabi rotation; textbook two-level optics). Area pi transfers a to b; pi/2 makes an equal superposition.
 */
export function siteAmplitudes(levels: number, level: number, pulses: Pulse[], site: number): Float64Array {
  const amp = new Float64Array(2 * levels);
  amp[2 * level] = 1;
  for (const pulse of pulses) {
    if (pulse.sites !== null && !pulse.sites.includes(site)) continue;
    const [a, b] = pulse.between;
    const c = Math.cos(pulse.area / 2);
    const s = Math.sin(pulse.area / 2);
    const ar = amp[2 * a];
    const ai = amp[2 * a + 1];
    const br = amp[2 * b];
    const bi = amp[2 * b + 1];
    // -i e^{i phase} = sin(phase) - i cos(phase)
    const pr = Math.sin(pulse.phase);
    const pi = -Math.cos(pulse.phase);
    // -i e^{-i phase} = -sin(phase) - i cos(phase)
    const qr = -Math.sin(pulse.phase);
    const qi = -Math.cos(pulse.phase);
    amp[2 * a] = c * ar + s * (qr * br - qi * bi);
    amp[2 * a + 1] = c * ai + s * (qr * bi + qi * br);
    amp[2 * b] = c * br + s * (pr * ar - pi * ai);
    amp[2 * b + 1] = c * bi + s * (pr * ai + pi * ar);
  }
  return amp;
}

/**
 * The product state prod_i (sum_n c_i[n] |n>_i), interleaved complex; perSite[i] = null leaves
 * site i empty (itinerant kinds only). Pinned: built site by site as a Kronecker product (site 0
 * fastest, matching the mixed-radix index). Fock bases: every configuration with one particle on
 * each occupied site gets prod_i c_i[n_i]; the particles are created in mode order (site-major), so
 * no fermion sign arises.
 */
export function productState(basis: Basis, perSite: (Float64Array | null)[]): Float64Array {
  if (basis.kind !== 'pinned') return fockProductState(basis, perSite);
  const N = basis.levels;
  const current = new Float64Array(2 * basis.dim);
  if (perSite.some((c) => c === null))
    throw new UnsupportedError('pinned particles fill every site: no site can start empty');
  current.set((perSite[0] as Float64Array).subarray(0, 2 * N));
  let length = N;
  for (let i = 1; i < basis.sites; i++) {
    const c = perSite[i] as Float64Array;
    // Write from the highest level down so the block of level 0 can be scaled in place last.
    for (let n = N - 1; n >= 0; n--) {
      const cr = c[2 * n];
      const ci = c[2 * n + 1];
      const offset = 2 * n * length;
      for (let k = 0; k < 2 * length; k += 2) {
        const xr = current[k];
        const xi = current[k + 1];
        current[offset + k] = cr * xr - ci * xi;
        current[offset + k + 1] = cr * xi + ci * xr;
      }
    }
    length *= N;
  }
  return current;
}

function fockProductState(basis: FockBasis, perSite: (Float64Array | null)[]): Float64Array {
  const N = basis.levels;
  const { local } = basis;
  const occupied = perSite.filter((c) => c !== null).length;
  if (occupied !== basis.particles) {
    throw new UnsupportedError(
      `the initial state puts ${occupied} particles on the chain, but particles.number is ${basis.particles}`,
    );
  }
  // Local state "one particle in level n", and the empty site.
  const single = new Int32Array(N).fill(-1);
  let empty = -1;
  for (let s = 0; s < local.dim; s++) {
    if (local.count[s] === 0) empty = s;
    if (local.count[s] === 1) for (let n = 0; n < N; n++) if (local.occupation[s * N + n] === 1) single[n] = s;
  }
  const psi = new Float64Array(2 * basis.dim);
  const state = new Int32Array(basis.sites);
  const visit = (site: number, re: number, im: number): void => {
    if (site === basis.sites) {
      const index = basis.rank(state);
      psi[2 * index] += re;
      psi[2 * index + 1] += im;
      return;
    }
    const c = perSite[site];
    if (c === null) {
      state[site] = empty;
      visit(site + 1, re, im);
      return;
    }
    for (let n = 0; n < N; n++) {
      const cr = c[2 * n];
      const ci = c[2 * n + 1];
      if (cr === 0 && ci === 0) continue;
      state[site] = single[n];
      visit(site + 1, re * cr - im * ci, re * ci + im * cr);
    }
  };
  visit(0, 1, 0);
  return psi;
}
