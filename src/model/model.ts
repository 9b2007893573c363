// Model: the validated spec resolved into the numbers the operator kernels need.
// Everything here is small (O(N^2 + L^2)); the large objects live in basis and operator.

import type { ParticleKind, Spec } from '../spec/spec.js';
import { latticeOf } from '../spec/lattice.js';
import { disorderOf } from '../spec/disorder.js';
import { realizeDisorder, type RealizedDisorder } from './disorder.js';
import {
  chainGeometry,
  geometryBonds,
  geometryCouplings,
  latticeGeometry,
  type Geometry,
  type PairList,
} from './lattice.js';

export type { Geometry, PairList } from './lattice.js';

export interface Model {
  readonly kind: ParticleKind;
  readonly sites: number;
  readonly levels: number;
  /** A ring: a periodic chain (never true off a chain, where momenta and structure factors do not apply). */
  readonly chainPeriodic: boolean;
  /** Where the sites are: positions, minimum-image separations, the field (src/model/lattice.ts). */
  readonly geometry: Geometry;
  /**
   * One particle's synthetic-dimension Hamiltonian h (levels x levels, row-major):
   * h[a*N+b] = <a|h|b>, tunnelling off the diagonal and detuning on it. Hermitian.
   */
  readonly localRe: Float64Array;
  readonly localIm: Float64Array;
  /**
   * Under disorder with noise on tunnelling, phase or detuning: each site's own h, site i's at
   * [i N^2, (i+1) N^2) (read through siteLocal); localRe/localIm then hold the union of their
   * nonzero patterns. null: every site has h = localRe + i localIm.
   */
  readonly siteLocalRe: Float64Array | null;
  readonly siteLocalIm: Float64Array | null;
  /** The drawn values of a disorder realization (src/model/disorder.ts), null without [disorder]. */
  readonly disorder: RealizedDisorder | null;
  /** True when some matrix element has a nonzero imaginary part (Peierls phases). */
  readonly isComplex: boolean;
  /** c_n, exchange weight of link n -> n+1 (length N-1; the closing ring link never exchanges). */
  readonly exchangeWeights: Float64Array;
  readonly exchangePairs: PairList;
  /** mu_n, permanent dipole per level for the diagonal dipole term. */
  readonly moments: Float64Array;
  readonly isingPairs: PairList;
  /** Real-space hopping bonds with amplitude t (itinerant kinds only; empty for pinned). */
  readonly hoppingBonds: PairList;
  readonly particleNumber: number;
  readonly maxPerSite: number;
  readonly onsite: number;
}

// The chain formulas as they were before [lattice]: the lattice code must reproduce them bit for bit
// on chains (tests/model/lattice.test.ts compares the arrays).

/** Separation of sites i and j in lattice spacings; the shorter way round on a periodic chain. */
export function siteDistance(i: number, j: number, sites: number, periodic: boolean): number {
  const d = Math.abs(i - j);
  return periodic ? Math.min(d, sites - d) : d;
}

/** Pair couplings strength * f(r): f = 1 at r = 1 only ("nearest") or 1/r^3 up to the cutoff ("dipolar"). */
export function pairCouplings(
  sites: number,
  periodic: boolean,
  strength: number,
  range: 'nearest' | 'dipolar',
  cutoff: number,
): PairList {
  const is: number[] = [];
  const js: number[] = [];
  const vs: number[] = [];
  if (strength !== 0) {
    for (let i = 0; i < sites; i++) {
      for (let j = i + 1; j < sites; j++) {
        const r = siteDistance(i, j, sites, periodic);
        let f = 0;
        if (range === 'nearest') f = r === 1 ? 1 : 0;
        else if (r <= cutoff) f = 1 / (r * r * r);
        if (f !== 0) {
          is.push(i);
          js.push(j);
          vs.push(strength * f);
        }
      }
    }
  }
  return { count: vs.length, i: Int32Array.from(is), j: Int32Array.from(js), value: Float64Array.from(vs) };
}

/** Nearest-neighbour bonds of a chain; a ring's (0, L-1) last. */
export function nearestNeighbourBonds(sites: number, periodic: boolean, amplitude: number): PairList {
  const is: number[] = [];
  const js: number[] = [];
  if (amplitude !== 0) {
    for (let i = 0; i + 1 < sites; i++) {
      is.push(i);
      js.push(i + 1);
    }
    if (periodic && sites > 2) {
      // Stored as (0, L-1) with i < j: fermion signs are worked out for any i < j (src/operator/fock.ts).
      is.push(0);
      js.push(sites - 1);
    }
  }
  return {
    count: is.length,
    i: Int32Array.from(is),
    j: Int32Array.from(js),
    value: new Float64Array(is.length).fill(amplitude),
  };
}

/** The spec's geometry: its [lattice], else its [chain] as a lattice of shape "chain". */
export function geometryOf(spec: Spec): Geometry {
  const lattice = latticeOf(spec);
  return lattice ? latticeGeometry(lattice) : chainGeometry(spec.chain.sites, spec.chain.boundary === 'periodic');
}

/**
 * Writes one particle's level Hamiltonian h (N x N, row-major) at `offset` of re/im: detuning on the
 * diagonal, -J_l e^{i phi_l} at <l+1|h|l> and its conjugate partner.
 */
export function writeLocalMatrix(
  N: number,
  tunnelling: readonly number[],
  phase: readonly number[],
  detuning: readonly number[],
  localRe: Float64Array,
  localIm: Float64Array,
  offset = 0,
): void {
  for (let n = 0; n < N; n++) localRe[offset + n * N + n] = detuning[n];
  const links = tunnelling.length;
  for (let l = 0; l < links; l++) {
    const from = l;
    const to = (l + 1) % N;
    const J = tunnelling[l];
    const phi = phase[l];
    // <n+1| h |n> = -J e^{i phi}; the Hermitian partner is its conjugate.
    // A phase meant as a multiple of pi (e.g. Math.PI) leaves rounding noise in the sine; drop it so
    // such a model stays real, as it is.
    const re = -J * Math.cos(phi);
    const rawIm = -J * Math.sin(phi);
    const im = Math.abs(rawIm) <= 4 * Number.EPSILON * Math.abs(J) * Math.max(1, Math.abs(phi)) ? 0 : rawIm;
    localRe[offset + to * N + from] += re;
    localIm[offset + to * N + from] += im;
    localRe[offset + from * N + to] += re;
    localIm[offset + from * N + to] -= im;
  }
}

/** Site i's level Hamiltonian: its own under disorder, else the common one. */
export function siteLocal(model: Model, site: number): { re: Float64Array; im: Float64Array } {
  if (!model.siteLocalRe || !model.siteLocalIm) return { re: model.localRe, im: model.localIm };
  const size = model.levels * model.levels;
  return {
    re: model.siteLocalRe.subarray(site * size, (site + 1) * size),
    im: model.siteLocalIm.subarray(site * size, (site + 1) * size),
  };
}

export function buildModel(spec: Spec): Model {
  const N = spec.levels.count;
  const geometry = geometryOf(spec);
  const L = geometry.sites;
  const localRe = new Float64Array(N * N);
  const localIm = new Float64Array(N * N);
  writeLocalMatrix(N, spec.levels.tunnelling, spec.levels.phase, spec.levels.detuning, localRe, localIm);
  const ex = spec.exchange;
  const is = spec.ising;
  const kind = spec.particles.kind;
  let exchangePairs = geometryCouplings(geometry, ex.strength, ex.range, ex.cutoff);
  // A disorder realization: each site's own level Hamiltonian, each pair's own exchange.
  const realized = disorderOf(spec) ? realizeDisorder(spec, geometry, exchangePairs) : null;
  let siteLocalRe: Float64Array | null = null;
  let siteLocalIm: Float64Array | null = null;
  if (realized?.tunnelling && realized.phase && realized.detuning) {
    siteLocalRe = new Float64Array(L * N * N);
    siteLocalIm = new Float64Array(L * N * N);
    for (let i = 0; i < L; i++)
      writeLocalMatrix(
        N,
        realized.tunnelling[i],
        realized.phase[i],
        realized.detuning[i],
        siteLocalRe,
        siteLocalIm,
        i * N * N,
      );
    // The common matrix is the union of the sites' patterns (memory estimates count its nonzeros).
    localRe.fill(0);
    localIm.fill(0);
    for (let i = 0; i < L; i++)
      for (let k = 0; k < N * N; k++) {
        if (Math.abs(siteLocalRe[i * N * N + k]) > Math.abs(localRe[k])) localRe[k] = siteLocalRe[i * N * N + k];
        if (Math.abs(siteLocalIm[i * N * N + k]) > Math.abs(localIm[k])) localIm[k] = siteLocalIm[i * N * N + k];
      }
  }
  if (realized?.exchange)
    exchangePairs = { ...exchangePairs, value: Float64Array.from(realized.exchange, (e) => e[2]) };
  let isComplex = false;
  for (let k = 0; k < N * N; k++) if (localIm[k] !== 0) isComplex = true;

  return {
    kind,
    sites: L,
    levels: N,
    chainPeriodic: geometry.isRing,
    geometry,
    localRe,
    localIm,
    siteLocalRe,
    siteLocalIm,
    isComplex,
    exchangeWeights: Float64Array.from(ex.weights),
    exchangePairs,
    moments: Float64Array.from(is.moments),
    isingPairs: geometryCouplings(geometry, is.strength, is.range, is.cutoff),
    hoppingBonds: geometryBonds(geometry, kind === 'pinned' ? 0 : spec.particles.hopping),
    particleNumber: spec.particles.number,
    maxPerSite: spec.particles.maxPerSite,
    onsite: spec.particles.onsite,
    disorder: realized,
  };
}
