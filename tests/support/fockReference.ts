// An independent, deliberately plain construction of docs/model.md's Hamiltonian for itinerant particles
// (hard-core bosons, soft-core bosons, fermions) as a dense matrix, from second quantization as in
// any many-body textbook: states are occupation lists over the modes m = i*N + n (site-major,
// level-minor), operators are applied one creation or annihilation at a time, right to left,
//   a_m |..o_m..>  = sqrt(o_m) |..o_m - 1..>,  a+_m |..o_m..> = sqrt(o_m + 1) |..o_m + 1..>   (bosons)
//   a_m |..1_m..>  = (-1)^(sum_{m' < m} o_m') |..0_m..>, and the same sign for a+_m          (fermions)
// and a result outside the allowed occupations (more than one per site for hard-core bosons, more
// than max_per_site for soft-core bosons) is dropped: hard-core and truncated bosons are the
// projected bosonic operators. Shares no code with src/ beyond the validated spec; looks states up
// by string keys, which is fine at these sizes.

import { Matrix, EigenvalueDecomposition } from 'ml-matrix';
import type { Spec } from '../../src/spec/spec.js';
import { rng } from './random.js';

export interface FockReference {
  dim: number;
  /** Occupation list of each basis state, over modes i*N + n. */
  states: number[][];
  indexOf: Map<string, number>;
  re: Matrix;
  im: Matrix;
}

/** One creation (dagger) or annihilation operator on a mode. */
export interface Ladder {
  mode: number;
  dagger: boolean;
}

export const key = (occ: number[]): string => occ.join(',');

function siteCap(spec: Spec): number {
  if (spec.particles.kind === 'hardcore') return 1;
  if (spec.particles.kind === 'boson') return spec.particles.maxPerSite;
  return spec.levels.count;
}

function modeCap(spec: Spec): number {
  return spec.particles.kind === 'boson' ? spec.particles.maxPerSite : 1;
}

export function allowed(spec: Spec, occ: number[]): boolean {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  for (let i = 0; i < L; i++) {
    let total = 0;
    for (let n = 0; n < N; n++) {
      const o = occ[i * N + n];
      if (o < 0 || o > modeCap(spec)) return false;
      total += o;
    }
    if (total > siteCap(spec)) return false;
  }
  return true;
}

/** Every allowed occupation list with the spec's particle number, by brute force over all lists. */
export function enumerateStates(spec: Spec): number[][] {
  const M = spec.chain.sites * spec.levels.count;
  const cap = modeCap(spec);
  const out: number[][] = [];
  const occ = new Array<number>(M).fill(0);
  const walk = (m: number, left: number): void => {
    if (m === M) {
      if (left === 0 && allowed(spec, occ)) out.push([...occ]);
      return;
    }
    for (let o = 0; o <= Math.min(cap, left); o++) {
      occ[m] = o;
      walk(m + 1, left - o);
    }
    occ[m] = 0;
  };
  walk(0, spec.particles.number);
  return out;
}

/** Applies a product of ladder operators (the last one acts first); null when the result vanishes. */
export function applyLadders(spec: Spec, ops: Ladder[], occ: number[]): { occ: number[]; amp: number } | null {
  const fermion = spec.particles.kind === 'fermion';
  const o = [...occ];
  let amp = 1;
  for (let k = ops.length - 1; k >= 0; k--) {
    const { mode, dagger } = ops[k];
    let before = 0;
    for (let m = 0; m < mode; m++) before += o[m];
    if (dagger) {
      if (fermion) {
        if (o[mode] === 1) return null;
        if (before % 2 === 1) amp = -amp;
      } else amp *= Math.sqrt(o[mode] + 1);
      o[mode] += 1;
    } else {
      if (o[mode] === 0) return null;
      if (fermion) {
        if (before % 2 === 1) amp = -amp;
      } else amp *= Math.sqrt(o[mode]);
      o[mode] -= 1;
    }
  }
  if (!allowed(spec, o)) return null;
  return { occ: o, amp };
}

function pairFactor(i: number, j: number, L: number, periodic: boolean, range: string, cutoff: number): number {
  let r = Math.abs(i - j);
  if (periodic) r = Math.min(r, L - r);
  if (range === 'nearest') return r === 1 ? 1 : 0;
  return r <= cutoff ? 1 / r ** 3 : 0;
}

/** The dense Hamiltonian of an itinerant spec, term by term from docs/model.md. */
export function denseFockHamiltonian(spec: Spec): FockReference {
  const L = spec.chain.sites;
  const N = spec.levels.count;
  const periodic = spec.chain.boundary === 'periodic';
  const states = enumerateStates(spec);
  const dim = states.length;
  const indexOf = new Map(states.map((s, k) => [key(s), k]));
  const re = Matrix.zeros(dim, dim);
  const im = Matrix.zeros(dim, dim);
  const mode = (i: number, n: number) => i * N + n;
  const cr = (i: number, n: number): Ladder => ({ mode: mode(i, n), dagger: true });
  const an = (i: number, n: number): Ladder => ({ mode: mode(i, n), dagger: false });

  // Off-diagonal one-body matrix h_ab of one particle's levels: <l+1|h|l> = -J e^{i phi}.
  const hRe = Array.from({ length: N }, () => new Array<number>(N).fill(0));
  const hIm = Array.from({ length: N }, () => new Array<number>(N).fill(0));
  spec.levels.tunnelling.forEach((J, l) => {
    const phi = spec.levels.phase[l];
    const a = (l + 1) % N;
    hRe[a][l] += -J * Math.cos(phi);
    hIm[a][l] += -J * Math.sin(phi);
    hRe[l][a] += -J * Math.cos(phi);
    hIm[l][a] -= -J * Math.sin(phi);
  });

  const bonds: [number, number][] = [];
  for (let i = 0; i + 1 < L; i++) bonds.push([i, i + 1]);
  if (periodic) bonds.push([L - 1, 0]);

  states.forEach((occ, s) => {
    const add = (ops: Ladder[], cRe: number, cIm = 0) => {
      const r = applyLadders(spec, ops, occ);
      if (!r) return;
      const t = indexOf.get(key(r.occ))!;
      re.set(t, s, re.get(t, s) + cRe * r.amp);
      im.set(t, s, im.get(t, s) + cIm * r.amp);
    };
    // diagonal: detuning, on-site U, diagonal dipole term
    let diag = 0;
    const Ni: number[] = [];
    const mi: number[] = [];
    for (let i = 0; i < L; i++) {
      let count = 0;
      let m = 0;
      for (let n = 0; n < N; n++) {
        const o = occ[mode(i, n)];
        diag += spec.levels.detuning[n] * o;
        count += o;
        m += spec.ising.moments[n] * o;
      }
      Ni.push(count);
      mi.push(m);
      diag += (spec.particles.onsite / 2) * count * (count - 1);
    }
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++)
        diag +=
          spec.ising.strength * pairFactor(i, j, L, periodic, spec.ising.range, spec.ising.cutoff) * mi[i] * mi[j];
    re.set(s, s, re.get(s, s) + diag);
    // synthetic tunnelling: sum_{a != b} h_ab a+_{i,a} a_{i,b}
    for (let i = 0; i < L; i++)
      for (let a = 0; a < N; a++)
        for (let b = 0; b < N; b++)
          if (a !== b && (hRe[a][b] !== 0 || hIm[a][b] !== 0)) add([cr(i, a), an(i, b)], hRe[a][b], hIm[a][b]);
    // exchange: V_ij c_n (a+_{i,n+1} a_{i,n} a+_{j,n} a_{j,n+1} + h.c.)
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++) {
        const V = spec.exchange.strength * pairFactor(i, j, L, periodic, spec.exchange.range, spec.exchange.cutoff);
        if (V === 0) continue;
        for (let n = 0; n + 1 < N; n++) {
          const c = V * spec.exchange.weights[n];
          add([cr(i, n + 1), an(i, n), cr(j, n), an(j, n + 1)], c);
          add([cr(j, n + 1), an(j, n), cr(i, n), an(i, n + 1)], c);
        }
      }
    // hopping: -t sum_<ij> sum_n (a+_{i,n} a_{j,n} + h.c.)
    const t = spec.particles.hopping;
    if (t !== 0)
      for (const [i, j] of bonds)
        for (let n = 0; n < N; n++) {
          add([cr(i, n), an(j, n)], -t);
          add([cr(j, n), an(i, n)], -t);
        }
  });
  return { dim, states, indexOf, re, im };
}

/** Lowest eigenvalues and (for real matrices) eigenvectors of a dense reference, via ml-matrix. */
export function denseGround(ref: FockReference): { values: number[]; vectors: number[][] } {
  const evd = new EigenvalueDecomposition(ref.re, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k]).sort((a, b) => a[0] - b[0]);
  return {
    values: order.map((o) => o[0]),
    vectors: order.map((o) => evd.eigenvectorMatrix.getColumn(o[1])),
  };
}

/** <psi| ops |psi> for a real reference state psi. */
export function expectation(spec: Spec, ref: FockReference, psi: number[], ops: Ladder[]): number {
  let total = 0;
  ref.states.forEach((occ, s) => {
    if (psi[s] === 0) return;
    const r = applyLadders(spec, ops, occ);
    if (!r) return;
    total += psi[ref.indexOf.get(key(r.occ))!] * r.amp * psi[s];
  });
  return total;
}

/** A spec of the given kind with every term switched on and random couplings (raw tree). */
export function randomItinerantSpec(
  seed: number,
  kind: 'hardcore' | 'boson' | 'fermion',
  sites: number,
  levels: number,
  number: number,
  options: { periodic?: boolean; complex?: boolean; maxPerSite?: number } = {},
): Record<string, any> {
  const r = rng(seed);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const ring = levels >= 3 && r() < 0.5;
  const links = ring ? levels : levels - 1;
  const periodic = options.periodic ?? (sites >= 3 && r() < 0.5);
  const particles: Record<string, unknown> = { kind, number, hopping: u(0.3, 1.5) };
  if (kind === 'boson') {
    particles.onsite = u(0.2, 3);
    if (options.maxPerSite !== undefined) particles.max_per_site = options.maxPerSite;
  }
  return JSON.parse(
    JSON.stringify({
      chain: { sites, boundary: periodic ? 'periodic' : 'open' },
      levels: {
        count: levels,
        boundary: ring ? 'ring' : 'open',
        tunnelling: Array.from({ length: links }, () => u(0.2, 1.5)),
        phase: Array.from({ length: links }, () => (options.complex ? u(-Math.PI, Math.PI) : r() < 0.5 ? 0 : Math.PI)),
        detuning: Array.from({ length: levels }, () => u(-1, 1)),
      },
      exchange: {
        strength: u(0.3, 3),
        ...(r() < 0.5 ? { range: 'nearest' } : { range: 'dipolar', cutoff: r() < 0.5 ? 2 : undefined }),
        weights: r() < 0.5 ? 'rotor' : Array.from({ length: Math.max(0, levels - 1) }, () => u(0.5, 1.5)),
      },
      ising: {
        strength: u(-1, 1),
        moments: Array.from({ length: levels }, () => u(-1, 1)),
        range: r() < 0.5 ? 'nearest' : 'dipolar',
      },
      particles,
      solve: { states: 4, tolerance: 1e-10 },
    }),
  );
}
