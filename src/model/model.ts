// Model: the validated spec resolved into the numbers the operator kernels need.
// Everything here is small (O(N^2 + L^2)); the large objects live in basis and operator.

import type { ParticleKind, Spec } from '../spec/spec.js';
import { latticeOf } from '../spec/lattice.js';
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

export function buildModel(spec: Spec): Model {
  const N = spec.levels.count;
  const geometry = geometryOf(spec);
  const L = geometry.sites;
  const localRe = new Float64Array(N * N);
  const localIm = new Float64Array(N * N);
  for (let n = 0; n < N; n++) localRe[n * N + n] = spec.levels.detuning[n];
  const links = spec.levels.tunnelling.length;
  for (let l = 0; l < links; l++) {
    const from = l;
    const to = (l + 1) % N;
    const J = spec.levels.tunnelling[l];
    const phi = spec.levels.phase[l];
    // <n+1| h |n> = -J e^{i phi}; the Hermitian partner is its conjugate.
    // A phase meant as a multiple of pi (e.g. Math.PI) leaves rounding noise in the sine; drop it so
    // such a model stays real, as it is.
    const re = -J * Math.cos(phi);
    const rawIm = -J * Math.sin(phi);
    const im = Math.abs(rawIm) <= 4 * Number.EPSILON * Math.abs(J) * Math.max(1, Math.abs(phi)) ? 0 : rawIm;
    localRe[to * N + from] += re;
    localIm[to * N + from] += im;
    localRe[from * N + to] += re;
    localIm[from * N + to] -= im;
  }
  let isComplex = false;
  for (let k = 0; k < N * N; k++) if (localIm[k] !== 0) isComplex = true;

  const ex = spec.exchange;
  const is = spec.ising;
  const kind = spec.particles.kind;
  return {
    kind,
    sites: L,
    levels: N,
    chainPeriodic: geometry.isRing,
    geometry,
    localRe,
    localIm,
    isComplex,
    exchangeWeights: Float64Array.from(ex.weights),
    exchangePairs: geometryCouplings(geometry, ex.strength, ex.range, ex.cutoff),
    moments: Float64Array.from(is.moments),
    isingPairs: geometryCouplings(geometry, is.strength, is.range, is.cutoff),
    hoppingBonds: geometryBonds(geometry, kind === 'pinned' ? 0 : spec.particles.hopping),
    particleNumber: spec.particles.number,
    maxPerSite: spec.particles.maxPerSite,
    onsite: spec.particles.onsite,
  };
}
