// Fixed-particle-number Fock bases for itinerant particles over the modes (site, level).
//
// A many-body state is a tuple of *local states*, one per site: the occupations of that site's N
// levels. All sites share one local space, so the basis is every tuple whose particle counts add
// up to the particle number. States are ranked lexicographically (site 0 most significant) by a
// generalisation of the combinatorial number system:
//
//     rank(s_0 .. s_{L-1}) = sum_i R[i][P_i][s_i],     P_i = particles on sites before i,
//     R[i][P][s] = sum over local states t < s of ways(L-1-i sites hold Np - P - n(t) particles),
//
// so ranking is L table look-ups, and a move that changes two neighbouring sites changes only two
// terms of the sum. No table of states and no hash map is stored; enumeration in rank order is an
// odometer over per-(site, remaining particles) lists of feasible local states.
//
// Local spaces (the mode order inside a site is by level, as docs/model.md's site-major order asks):
//   hardcore  empty, or one particle in level n                  N + 1 local states
//   fermion   any subset of the N levels                          2^N local states
//   boson     occupations o_0..o_{N-1} with sum <= max_per_site   C(K + N, N) local states
// Local states are sorted by particle count, so the empty site is local state 0.

import { ResourceError } from '../errors/errors.js';

export type ItinerantKind = 'hardcore' | 'boson' | 'fermion';

/** Largest local space accepted: the rank table holds sites x (particles+1) x local states numbers. */
export const MAX_LOCAL_STATES = 1 << 14;

/** The states of one site and how the creation and annihilation operators act on them. */
export interface LocalSpace {
  readonly kind: ItinerantKind;
  readonly levels: number;
  readonly maxPerSite: number;
  /** Number of local states d. */
  readonly dim: number;
  /** count[s]: particles in local state s. */
  readonly count: Int32Array;
  /** occupation[s * levels + n]: particles of local state s in level n. */
  readonly occupation: Int32Array;
  /**
   * a+_n on local state s: createTo[n * d + s] is the resulting local state (-1 when the result is
   * zero or leaves the space), createAmp[n * d + s] its amplitude. Fermion amplitudes carry the sign
   * (-1)^(occupied levels below n on this site); the sign from earlier sites is the caller's.
   */
  readonly createTo: Int32Array;
  readonly createAmp: Float64Array;
  /** a_n on local state s, same layout and sign convention. */
  readonly annihilateTo: Int32Array;
  readonly annihilateAmp: Float64Array;
}

function binomial(n: number, k: number): number {
  if (k < 0 || k > n) return 0;
  let r = 1;
  for (let i = 1; i <= Math.min(k, n - k); i++) r = (r * (n - Math.min(k, n - k) + i)) / i;
  return Math.round(r);
}

/** Number of local states of one site, without building them. */
export function localDimension(kind: ItinerantKind, levels: number, maxPerSite: number): number {
  if (kind === 'hardcore') return levels + 1;
  if (kind === 'fermion') return 2 ** levels;
  return binomial(maxPerSite + levels, levels);
}

/** How many local states hold k particles, k = 0..(largest count). */
function localCountsByParticles(kind: ItinerantKind, levels: number, maxPerSite: number): number[] {
  if (kind === 'hardcore') return [1, levels];
  if (kind === 'fermion') return Array.from({ length: levels + 1 }, (_, k) => binomial(levels, k));
  // k bosons in N levels: C(k + N - 1, N - 1) (stars and bars).
  return Array.from({ length: maxPerSite + 1 }, (_, k) => binomial(k + levels - 1, levels - 1));
}

/**
 * ways[m * (Np + 1) + p]: number of configurations of m sites holding exactly p particles,
 * m = 0..sites, p = 0..Np; the coefficients of (sum_k c_k x^k)^m truncated at x^Np.
 */
function waysTable(byParticles: number[], sites: number, particles: number): Float64Array {
  const P = particles + 1;
  const ways = new Float64Array((sites + 1) * P);
  ways[0] = 1;
  for (let m = 1; m <= sites; m++) {
    for (let p = 0; p <= particles; p++) {
      let w = 0;
      for (let k = 0; k < byParticles.length && k <= p; k++) w += byParticles[k] * ways[(m - 1) * P + p - k];
      ways[m * P + p] = w;
    }
  }
  return ways;
}

/**
 * Dimension of the fixed-number Fock space in closed form: C(L, Np) N^Np for hard-core particles,
 * C(L N, Np) for fermions, and for soft-core bosons the coefficient of x^Np in
 * (sum_{k<=K} C(k+N-1, N-1) x^k)^L (compositions bounded per site). Allocates nothing large.
 */
export function fockDimension(
  kind: ItinerantKind,
  sites: number,
  levels: number,
  particles: number,
  maxPerSite: number,
): number {
  if (kind === 'hardcore') return binomial(sites, particles) * levels ** particles;
  if (kind === 'fermion') return binomial(sites * levels, particles);
  const ways = waysTable(localCountsByParticles(kind, levels, maxPerSite), sites, particles);
  return ways[sites * (particles + 1) + particles];
}

/** The local space of one site for a kind; local states sorted by particle count, then by occupations. */
export function buildLocalSpace(kind: ItinerantKind, levels: number, maxPerSite: number): LocalSpace {
  const N = levels;
  const d = localDimension(kind, N, maxPerSite);
  if (d > MAX_LOCAL_STATES) {
    throw new ResourceError(
      `one site of kind "${kind}" with ${N} levels has ${d} local states, more than the ${MAX_LOCAL_STATES} supported`,
    );
  }
  const vectors: number[][] = [];
  if (kind === 'hardcore') {
    vectors.push(new Array<number>(N).fill(0));
    for (let n = 0; n < N; n++) vectors.push(Array.from({ length: N }, (_, m) => (m === n ? 1 : 0)));
  } else {
    const cap = kind === 'fermion' ? 1 : maxPerSite;
    const total = kind === 'fermion' ? N : maxPerSite;
    const current = new Array<number>(N).fill(0);
    const walk = (n: number, left: number): void => {
      if (n === N) {
        vectors.push([...current]);
        return;
      }
      for (let o = 0; o <= Math.min(cap, left); o++) {
        current[n] = o;
        walk(n + 1, left - o);
      }
      current[n] = 0;
    };
    walk(0, total);
    const sum = (v: number[]) => v.reduce((a, b) => a + b, 0);
    // By particle count, then lexicographically with level 0 most significant.
    vectors.sort((a, b) => {
      const diff = sum(a) - sum(b);
      if (diff !== 0) return diff;
      for (let n = 0; n < N; n++) if (a[n] !== b[n]) return a[n] - b[n];
      return 0;
    });
  }

  const count = new Int32Array(d);
  const occupation = new Int32Array(d * N);
  // Local look-up by a numeric code of the occupations (base K+1); only d entries, built once.
  const base = Math.max(2, maxPerSite + 1);
  const codeOf = (v: ArrayLike<number>): number => {
    let c = 0;
    for (let n = N - 1; n >= 0; n--) c = c * base + v[n];
    return c;
  };
  const indexOfCode = new Map<number, number>();
  vectors.forEach((v, s) => {
    let k = 0;
    for (let n = 0; n < N; n++) {
      occupation[s * N + n] = v[n];
      k += v[n];
    }
    count[s] = k;
    indexOfCode.set(codeOf(v), s);
  });

  const createTo = new Int32Array(N * d).fill(-1);
  const createAmp = new Float64Array(N * d);
  const annihilateTo = new Int32Array(N * d).fill(-1);
  const annihilateAmp = new Float64Array(N * d);
  const capacity = kind === 'boson' ? maxPerSite : 1;
  const work = new Array<number>(N);
  for (let s = 0; s < d; s++) {
    let below = 0; // particles in levels below n, for the fermion sign
    for (let n = 0; n < N; n++) {
      const o = occupation[s * N + n];
      for (let m = 0; m < N; m++) work[m] = occupation[s * N + m];
      const sign = kind === 'fermion' && below % 2 === 1 ? -1 : 1;
      // a+_n: allowed while the site (hard-core, soft-core) or the mode (fermion) has room.
      const roomy = kind === 'fermion' ? o === 0 : count[s] < capacity;
      if (roomy) {
        work[n] = o + 1;
        const t = indexOfCode.get(codeOf(work));
        if (t !== undefined) {
          createTo[n * d + s] = t;
          createAmp[n * d + s] = kind === 'boson' ? Math.sqrt(o + 1) * sign : sign;
        }
        work[n] = o;
      }
      if (o > 0) {
        work[n] = o - 1;
        const t = indexOfCode.get(codeOf(work));
        if (t !== undefined) {
          annihilateTo[n * d + s] = t;
          annihilateAmp[n * d + s] = kind === 'boson' ? Math.sqrt(o) * sign : sign;
        }
        work[n] = o;
      }
      below += o;
    }
  }
  return { kind, levels: N, maxPerSite, dim: d, count, occupation, createTo, createAmp, annihilateTo, annihilateAmp };
}

/** A fixed-particle-number Fock basis: ranking tables and an odometer, no list of states. */
export class FockBasis {
  readonly dim: number;
  readonly local: LocalSpace;
  /** ways[m * (particles+1) + p], see waysTable. */
  readonly ways: Float64Array;
  /** rankTable[(i * (particles+1) + P) * d + s] = R[i][P][s]. */
  readonly rankTable: Float64Array;
  // feasible[feasibleStart[i * (particles+1) + r] ..]: local states of site i that leave a completable
  // remainder when r particles are still to be placed on sites i..L-1, ascending.
  private readonly feasibleStart: Int32Array;
  private readonly feasible: Int32Array;

  constructor(
    readonly kind: ItinerantKind,
    readonly sites: number,
    readonly levels: number,
    readonly particles: number,
    readonly maxPerSite: number,
  ) {
    const local = buildLocalSpace(kind, levels, maxPerSite);
    this.local = local;
    const d = local.dim;
    const L = sites;
    const P1 = particles + 1;
    const byParticles = localCountsByParticles(kind, levels, maxPerSite);
    this.ways = waysTable(byParticles, L, particles);
    this.dim = this.ways[L * P1 + particles];
    const ways = this.ways;
    const waysOf = (m: number, p: number): number => (p < 0 || p > particles ? 0 : ways[m * P1 + p]);

    this.rankTable = new Float64Array(L * P1 * d);
    for (let i = 0; i < L; i++) {
      for (let P = 0; P <= particles; P++) {
        let acc = 0;
        const row = (i * P1 + P) * d;
        for (let s = 0; s < d; s++) {
          this.rankTable[row + s] = acc;
          acc += waysOf(L - 1 - i, particles - P - local.count[s]);
        }
      }
    }

    const start = new Int32Array(L * P1 + 1);
    const list: number[] = [];
    for (let i = 0; i < L; i++) {
      for (let r = 0; r <= particles; r++) {
        start[i * P1 + r] = list.length;
        for (let s = 0; s < d; s++) if (waysOf(L - 1 - i, r - local.count[s]) > 0) list.push(s);
      }
    }
    start[L * P1] = list.length;
    this.feasibleStart = start;
    this.feasible = Int32Array.from(list);
  }

  /** Rank of the state with local state tuple `state` (length sites). */
  rank(state: ArrayLike<number>): number {
    const d = this.local.dim;
    const P1 = this.particles + 1;
    let P = 0;
    let r = 0;
    for (let i = 0; i < this.sites; i++) {
      const s = state[i];
      r += this.rankTable[(i * P1 + P) * d + s];
      P += this.local.count[s];
    }
    return r;
  }

  /** Writes the local state tuple of state `index` into `out` (length sites). */
  unrank(index: number, out: Int32Array): void {
    const d = this.local.dim;
    const P1 = this.particles + 1;
    let P = 0;
    let rest = index;
    for (let i = 0; i < this.sites; i++) {
      const row = (i * P1 + P) * d;
      const r = this.particles - P;
      const from = this.feasibleStart[i * P1 + r];
      const to = this.feasibleStart[i * P1 + r + 1];
      // The largest feasible local state whose offset does not exceed what is left of the index.
      let chosen = this.feasible[from];
      for (let k = from; k < to; k++) {
        const s = this.feasible[k];
        if (this.rankTable[row + s] <= rest) chosen = s;
        else break;
      }
      out[i] = chosen;
      rest -= this.rankTable[row + chosen];
      P += this.local.count[chosen];
    }
  }

  /** Occupation of every mode (site-major, level-minor) of local state tuple `state` into `out` (length sites*levels). */
  modeOccupations(state: ArrayLike<number>, out: Int32Array): void {
    const N = this.levels;
    for (let i = 0; i < this.sites; i++) {
      for (let n = 0; n < N; n++) out[i * N + n] = this.local.occupation[state[i] * N + n];
    }
  }

  cursor(): FockCursor {
    return new FockCursor(this, this.feasibleStart, this.feasible);
  }
}

/**
 * Walks the basis in rank order. `state` holds the local state of each site, `prefix[i]` the
 * particles on sites before i (prefix[sites] = particles); `index` is the current rank.
 */
export class FockCursor {
  readonly state: Int32Array;
  readonly prefix: Int32Array;
  index = 0;
  private readonly position: Int32Array;
  private readonly sites: number;
  private readonly particles: number;
  private readonly count: Int32Array;

  constructor(
    basis: FockBasis,
    private readonly feasibleStart: Int32Array,
    private readonly feasible: Int32Array,
  ) {
    this.sites = basis.sites;
    this.particles = basis.particles;
    this.count = basis.local.count;
    this.state = new Int32Array(basis.sites);
    this.prefix = new Int32Array(basis.sites + 1);
    this.position = new Int32Array(basis.sites);
    this.reset();
  }

  /** Back to rank 0. */
  reset(): void {
    this.index = 0;
    this.fillFrom(0);
  }

  /** Advances to the next state; false (and no change) after the last one. */
  next(): boolean {
    const P1 = this.particles + 1;
    for (let k = this.sites - 1; k >= 0; k--) {
      const slot = k * P1 + this.particles - this.prefix[k];
      const from = this.feasibleStart[slot];
      const to = this.feasibleStart[slot + 1];
      const p = this.position[k] + 1;
      if (from + p < to) {
        this.position[k] = p;
        const s = this.feasible[from + p];
        this.state[k] = s;
        this.prefix[k + 1] = this.prefix[k] + this.count[s];
        this.fillFrom(k + 1);
        this.index++;
        return true;
      }
    }
    return false;
  }

  // Sites k.. take their first feasible local state.
  private fillFrom(k: number): void {
    const P1 = this.particles + 1;
    for (let i = k; i < this.sites; i++) {
      const s = this.feasible[this.feasibleStart[i * P1 + this.particles - this.prefix[i]]];
      this.position[i] = 0;
      this.state[i] = s;
      this.prefix[i + 1] = this.prefix[i] + this.count[s];
    }
  }
}
