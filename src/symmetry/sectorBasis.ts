// Symmetry-adapted bases of pinned chains: orbits of basis states under a group of index
// permutations, one representative per orbit, and the sector bases of momentum/parity/flip states
//   |r~> = (1/sqrt(|G| n_r)) sum_g chi(g)* g|r>,   n_r = sum over the stabilizer of r of chi(g),
// whose matrix elements are <r~_b|H|r~_a> = sum over s = g r_b in H|r_a> of <s|H|r_a> chi(g) sqrt(n_b/n_a).
//
// Why n_r: the stabilizer S of r (the elements with h r = r) splits the sum over G into |G|/|S|
// cosets g S, each carrying r to one orbit state with weight sum_{h in S} chi(gh)* = chi(g)* sum_S chi(h)*.
// chi restricted to S is a character of S, so that sum is |S| when chi is 1 on all of S and 0
// otherwise (orthogonality, common practice): r survives in the sector exactly when n_r =
// sum_{h in S} chi(h) = |S| > 0, and then the norm squared of sum_g chi(g)* g|r> is
// (|G|/|S|) |S|^2 = |G| n_r. On chains S is read off the translation period and the first j with
// T^j P r = r etc.; on lattices (translations Z_L1 x Z_L2 ...) every stabilizer element is kept.

import type { PinnedBasis } from '../basis/basis.js';
import { IndexActions, SitePermutation, type SectorLabel, type TranslationGroup } from './group.js';

export interface GroupUse {
  translation: boolean;
  reflection: boolean;
  levelFlip: boolean;
}

/** The point-group (or automorphism) elements a sector group uses: generator names and orders, and every element's site permutation, code e = e1 + o1 (e2 + ...). */
export interface PointElements {
  names: string[];
  orders: number[];
  elements: Int32Array[];
}

/**
 * Every basis state's orbit representative and the group element that carries the representative
 * to it, for one group. Built in one ascending sweep: the first unvisited state of an orbit is its
 * smallest, so it is the representative, and its orbit is generated once.
 */
export class OrbitMap {
  readonly group: GroupUse;
  readonly translations: number;
  readonly order: number;
  /** Representative index of every basis state. */
  readonly repOf: Int32Array;
  /**
   * Element code of g with g r = s: on chains j + translations*(a + 2b) for g = T^j P^a F^b; with
   * lattice translations or a point group j + translations*(e + points*b) for g = T^j p_e F^b.
   */
  readonly elementOf: Uint16Array;
  /** Representative basis indices, ascending. */
  readonly reps: Float64Array;
  /** Stabilizer of each representative: translation period R, and the smallest j with T^j P r = r, T^j F r = r, T^j P F r = r (-1 if none). */
  readonly period: Int32Array;
  readonly jP: Int32Array;
  readonly jF: Int32Array;
  readonly jPF: Int32Array;
  readonly charge: Int32Array;
  /** Lattice translations (off chains): the order of each periodic direction, else null (chains use `period`, `jP`...); [] with a point group alone. */
  readonly translationSizes: number[] | null;
  /** Point-group generators in use (names, orders) and the number of point elements (1 without). */
  readonly pointNames: string[];
  readonly pointOrders: number[];
  readonly points: number;
  /** Lattice translations: the non-identity stabilizer element codes of representative r are stabCodes[stabStart[r] .. stabStart[r+1]). */
  readonly stabStart: Int32Array | null;
  readonly stabCodes: Uint16Array | null;

  /**
   * With `shared`, the arrays live in SharedArrayBuffers, so threads solving other sectors can use
   * the map through `OrbitMap.fromParts` without copying it (it holds 6 bytes per basis state).
   */
  constructor(
    basis: PinnedBasis,
    group: GroupUse,
    actions: IndexActions = new IndexActions(basis),
    shared = false,
    lattice: TranslationGroup | null = null,
    point: PointElements | null = null,
  ) {
    this.group = group;
    const L = basis.sites;
    const dim = basis.dim;
    const latticeSteps = group.translation && lattice !== null;
    const general = latticeSteps || point !== null;
    if (general && group.reflection)
      throw new Error('lattice translations and point groups are not combined with the chain reflection');
    const sizes = latticeSteps ? lattice.sizes : [];
    const Lt = general ? sizes.reduce((a, b) => a * b, 1) : group.translation ? L : 1;
    const P = point ? point.elements.length : 1;
    this.translations = Lt;
    this.points = P;
    this.pointNames = point ? point.names.slice() : [];
    this.pointOrders = point ? point.orders.slice() : [];
    this.order = Lt * P * (group.reflection ? 2 : 1) * (group.levelFlip ? 2 : 1);
    if (this.order > 65536)
      throw new Error(`a symmetry group of order ${this.order} does not fit the 16-bit element codes`);
    const repOf = new Int32Array(shared ? new SharedArrayBuffer(4 * dim) : new ArrayBuffer(4 * dim)).fill(-1);
    const elementOf = new Uint16Array(shared ? new SharedArrayBuffer(2 * dim) : new ArrayBuffer(2 * dim));
    const reps: number[] = [];
    const period: number[] = [];
    const jP: number[] = [];
    const jF: number[] = [];
    const jPF: number[] = [];
    const charge: number[] = [];
    const A = actions;
    const flips = group.levelFlip ? 2 : 1;
    const parities = group.reflection ? 2 : 1;
    const stabStart: number[] = [0];
    const stabCodes: number[] = [];
    if (general) {
      const steps = latticeSteps ? lattice.generators.map((to) => new SitePermutation(basis, to)) : [];
      const pointActs = point ? point.elements.map((to) => new SitePermutation(basis, to)) : [];
      const digits = new Int32Array(sizes.length);
      for (let s = 0; s < dim; s++) {
        if (repOf[s] !== -1) continue;
        const r = reps.length;
        reps.push(s);
        for (let b = 0; b < flips; b++) {
          const u = b ? A.flip(s) : s;
          for (let e = 0; e < P; e++) {
            let t = e === 0 ? u : pointActs[e].apply(u);
            digits.fill(0);
            for (let j = 0; j < Lt; j++) {
              const code = j + Lt * (e + P * b);
              if (repOf[t] === -1) {
                repOf[t] = r;
                elementOf[t] = code;
              } else if (t === s && code !== 0) stabCodes.push(code);
              // next j (first direction fastest): T_d^(L_d) is the identity, so a wrapped digit
              // leaves t back at the start of its row before the next direction steps
              for (let d = 0; d < sizes.length; d++) {
                t = steps[d].apply(t);
                if (++digits[d] < sizes[d]) break;
                digits[d] = 0;
              }
            }
          }
        }
        stabStart.push(stabCodes.length);
        charge.push(A.charge(s));
      }
    }
    for (let s = 0; s < (general ? 0 : dim); s++) {
      if (repOf[s] !== -1) continue;
      const r = reps.length;
      reps.push(s);
      let R = Lt;
      let p = -1;
      let f = -1;
      let pf = -1;
      for (let b = 0; b < flips; b++) {
        const u0 = b ? A.flip(s) : s;
        for (let a = 0; a < parities; a++) {
          let t = a ? A.reflect(u0) : u0;
          for (let j = 0; j < Lt; j++) {
            if (repOf[t] === -1) {
              repOf[t] = r;
              elementOf[t] = j + Lt * (a + 2 * b);
            }
            if (t === s) {
              if (a === 0 && b === 0 && j > 0 && j < R) R = j;
              else if (a === 1 && b === 0 && p < 0) p = j;
              else if (a === 0 && b === 1 && f < 0) f = j;
              else if (a === 1 && b === 1 && pf < 0) pf = j;
            }
            if (group.translation) t = A.translate(t);
          }
        }
      }
      period.push(R);
      jP.push(p);
      jF.push(f);
      jPF.push(pf);
      charge.push(A.charge(s));
    }
    this.repOf = repOf;
    this.elementOf = elementOf;
    const place = <T extends Float64Array | Int32Array>(
      make: (buffer: ArrayBufferLike) => T,
      values: number[],
      bytes: number,
    ): T => {
      const array = make(
        shared ? new SharedArrayBuffer(bytes * values.length) : new ArrayBuffer(bytes * values.length),
      );
      array.set(values);
      return array;
    };
    this.reps = place((b) => new Float64Array(b), reps, 8);
    this.period = place((b) => new Int32Array(b), period, 4);
    this.jP = place((b) => new Int32Array(b), jP, 4);
    this.jF = place((b) => new Int32Array(b), jF, 4);
    this.jPF = place((b) => new Int32Array(b), jPF, 4);
    this.charge = place((b) => new Int32Array(b), charge, 4);
    this.translationSizes = general ? sizes.slice() : null;
    this.stabStart = general ? place((b) => new Int32Array(b), stabStart, 4) : null;
    this.stabCodes = general
      ? (() => {
          const codes = new Uint16Array(
            shared ? new SharedArrayBuffer(2 * stabCodes.length) : new ArrayBuffer(2 * stabCodes.length),
          );
          codes.set(stabCodes);
          return codes;
        })()
      : null;
  }

  /** The arrays of a map built with `shared`, to hand to another thread. */
  parts(): OrbitMapParts {
    const { group, translations, order, repOf, elementOf, reps, period, jP, jF, jPF, charge } = this;
    const { translationSizes, stabStart, stabCodes, pointNames, pointOrders, points } = this;
    return {
      pointNames,
      pointOrders,
      points,
      group,
      translations,
      order,
      repOf,
      elementOf,
      reps,
      period,
      jP,
      jF,
      jPF,
      charge,
      translationSizes,
      stabStart,
      stabCodes,
    };
  }

  /** A map over arrays another thread built (see `parts`). */
  static fromParts(parts: OrbitMapParts): OrbitMap {
    const map = Object.create(OrbitMap.prototype) as OrbitMap;
    return Object.assign(map, parts);
  }

  get representatives(): number {
    return this.reps.length;
  }
}

export type OrbitMapParts = Pick<
  OrbitMap,
  | 'group'
  | 'translations'
  | 'order'
  | 'repOf'
  | 'elementOf'
  | 'reps'
  | 'period'
  | 'jP'
  | 'jF'
  | 'jPF'
  | 'charge'
  | 'translationSizes'
  | 'stabStart'
  | 'stabCodes'
  | 'pointNames'
  | 'pointOrders'
  | 'points'
>;

/** One sector: the representatives compatible with its characters, and their norms n_r. */
export class SectorBasis {
  readonly dim: number;
  /** Orbit-map representative index of each sector state. */
  readonly repIndex: Int32Array;
  /** n_r of each sector state (real and positive for compatible representatives). */
  readonly norm: Float64Array;
  /** Sector state of each orbit representative, -1 where the representative is not in this sector. */
  readonly sectorOfRep: Int32Array;
  /** chi(g) for every element code. */
  readonly charRe: Float64Array;
  readonly charIm: Float64Array;
  /** True when some character is not real (momentum other than 0 and pi). */
  readonly complexCharacters: boolean;

  constructor(
    readonly orbits: OrbitMap,
    readonly label: SectorLabel,
  ) {
    const Lt = orbits.translations;
    if (orbits.stabStart !== null) {
      // lattice translations: the general stabilizer path
      const general = latticeSector(orbits, label);
      this.charRe = general.charRe;
      this.charIm = general.charIm;
      this.complexCharacters = general.complexCharacters;
      this.sectorOfRep = general.sectorOfRep;
      this.repIndex = general.repIndex;
      this.norm = general.norm;
      this.dim = general.repIndex.length;
      return;
    }
    const chainMomentum = label.momentum as number | null;
    const k = chainMomentum === null ? 0 : (2 * Math.PI * chainMomentum) / Lt;
    const p = label.parity ?? 1;
    const f = label.level_flip ?? 1;
    const size = Lt * 4;
    this.charRe = new Float64Array(size);
    this.charIm = new Float64Array(size);
    let complexCharacters = false;
    for (let code = 0; code < size; code++) {
      const j = code % Lt;
      const a = Math.floor(code / Lt) % 2;
      const b = Math.floor(code / (2 * Lt));
      const sign = (a ? p : 1) * (b ? f : 1);
      // exact values at k = 0 and pi keep real sectors real
      const twice = 2 * (chainMomentum ?? 0) * j;
      const cos = twice % Lt === 0 ? ((twice / Lt) % 2 === 0 ? 1 : -1) : Math.cos(k * j);
      const sin = twice % Lt === 0 ? 0 : Math.sin(k * j);
      this.charRe[code] = sign * cos;
      this.charIm[code] = sign * sin;
      if (this.charIm[code] !== 0) complexCharacters = true;
    }
    this.complexCharacters = complexCharacters;

    const nReps = orbits.representatives;
    const sectorOfRep = new Int32Array(nReps).fill(-1);
    // Typed arrays sized for every representative, trimmed at the end (plain arrays growing by
    // push cost most of this constructor's time on large chains).
    const repIndex = new Int32Array(nReps);
    const norm = new Float64Array(nReps);
    let count = 0;
    const cosK = (j: number) => this.charRe[j % Lt]; // chi(T^j), real wherever it is used below
    for (let r = 0; r < nReps; r++) {
      if (label.charge !== null && orbits.charge[r] !== label.charge) continue;
      const R = orbits.period[r];
      // Sum of chi over the translation stabilizer T^(mR): L/R if kR is a multiple of 2 pi, else 0.
      if (((chainMomentum ?? 0) * R) % Lt !== 0) continue;
      let n = 1;
      if (orbits.group.reflection && orbits.jP[r] >= 0) n += p * cosK(orbits.jP[r]);
      if (orbits.group.levelFlip && orbits.jF[r] >= 0) n += f * cosK(orbits.jF[r]);
      if (orbits.group.reflection && orbits.group.levelFlip && orbits.jPF[r] >= 0) n += p * f * cosK(orbits.jPF[r]);
      n *= Lt / R;
      if (n < 0.5) continue;
      sectorOfRep[r] = count;
      repIndex[count] = r;
      norm[count] = n;
      count++;
    }
    this.sectorOfRep = sectorOfRep;
    this.repIndex = repIndex.slice(0, count);
    this.norm = norm.slice(0, count);
    this.dim = count;
  }

  /**
   * Probability of every full-space basis state in the sector state with coefficients c:
   * |psi(t)|^2 = |c_r|^2 n_r / |G| for t in the orbit of r. Accumulated into `out` with a weight.
   */
  accumulateProbabilities(c: Float64Array, isComplex: boolean, weight: number, out: Float64Array): void {
    const { repOf } = this.orbits;
    const G = this.orbits.order;
    // per-representative probability first, then one sweep over the full space
    const perRep = new Float64Array(this.orbits.representatives);
    for (let a = 0; a < this.dim; a++) {
      const amp2 = isComplex ? c[2 * a] * c[2 * a] + c[2 * a + 1] * c[2 * a + 1] : c[a] * c[a];
      perRep[this.repIndex[a]] = (amp2 * this.norm[a]) / G;
    }
    for (let t = 0; t < out.length; t++) {
      const r = repOf[t];
      const w = perRep[r];
      if (w !== 0) out[t] += weight * w;
    }
  }

  /** Full-space amplitudes psi(t) = c_r chi(g_t)* sqrt(n_r/|G|), interleaved complex. */
  expand(c: Float64Array, isComplex: boolean): Float64Array {
    const { repOf, elementOf } = this.orbits;
    const G = this.orbits.order;
    const dimFull = repOf.length;
    const out = new Float64Array(2 * dimFull);
    for (let t = 0; t < dimFull; t++) {
      const a = this.sectorOfRep[repOf[t]];
      if (a < 0) continue;
      const scale = Math.sqrt(this.norm[a] / G);
      const cr = isComplex ? c[2 * a] : c[a];
      const ci = isComplex ? c[2 * a + 1] : 0;
      const g = elementOf[t];
      const xr = this.charRe[g];
      const xi = -this.charIm[g];
      out[2 * t] = scale * (cr * xr - ci * xi);
      out[2 * t + 1] = scale * (cr * xi + ci * xr);
    }
    return out;
  }

  /** Sector coefficients of a full-space vector: c_r = sqrt(n_r/|G|) sum over the orbit of chi(g_t) psi(t). */
  project(psi: Float64Array, psiComplex: boolean, outComplex: boolean): Float64Array {
    const { repOf, elementOf } = this.orbits;
    const G = this.orbits.order;
    const re = new Float64Array(this.dim);
    const im = new Float64Array(this.dim);
    for (let t = 0; t < repOf.length; t++) {
      const a = this.sectorOfRep[repOf[t]];
      if (a < 0) continue;
      const g = elementOf[t];
      const xr = this.charRe[g];
      const xi = this.charIm[g];
      const pr = psiComplex ? psi[2 * t] : psi[t];
      const pi = psiComplex ? psi[2 * t + 1] : 0;
      re[a] += xr * pr - xi * pi;
      im[a] += xr * pi + xi * pr;
    }
    const out = new Float64Array(outComplex ? 2 * this.dim : this.dim);
    for (let a = 0; a < this.dim; a++) {
      const scale = Math.sqrt(this.norm[a] / G);
      if (outComplex) {
        out[2 * a] = scale * re[a];
        out[2 * a + 1] = scale * im[a];
      } else out[a] = scale * re[a];
    }
    return out;
  }
}

/**
 * A sector of lattice translations and/or a point group: chi(T^j p_e F^b) =
 * f^b exp(2 pi i (sum_d m_d j_d / L_d + sum_g x_g e_g / o_g)), x_g the generator's character index
 * (label +1/-1 for order 2 is x = 0/1), exact at multiples of pi/2 (so real sectors stay real), and
 * n_r = sum over the stabilizer of chi.
 */
function latticeSector(orbits: OrbitMap, label: SectorLabel) {
  const Lt = orbits.translations;
  const P = orbits.points;
  const sizes = orbits.translationSizes as number[];
  const m = label.momentum === null || typeof label.momentum === 'number' ? sizes.map(() => 0) : label.momentum;
  const f = label.level_flip ?? 1;
  const names = orbits.pointNames;
  const orders = orbits.pointOrders;
  const given = label.point_group ?? {};
  if (names.length !== Object.keys(given).length || names.some((n) => !(n in given)))
    throw new Error(
      `sector label ${JSON.stringify(label.point_group)} does not match the point group [${names.join(', ')}]`,
    );
  const x = names.map((n, g) => (orders[g] === 2 ? (given[n] === -1 ? 1 : 0) : given[n]));
  const size = Lt * P * 2;
  const charRe = new Float64Array(size);
  const charIm = new Float64Array(size);
  let complexCharacters = false;
  const quarter = [
    [1, 0],
    [0, 1],
    [-1, 0],
    [0, -1],
  ];
  for (let code = 0; code < size; code++) {
    const j = code % Lt;
    const e = Math.floor(code / Lt) % P;
    const b = Math.floor(code / (Lt * P));
    // phase 2 pi phase/Lt with phase = sum_d m_d j_d (Lt / L_d) mod Lt, an integer
    let rest = j;
    let phase = 0;
    sizes.forEach((L, d) => {
      const jd = rest % L;
      rest = Math.floor(rest / L);
      phase += m[d] * jd * (Lt / L);
    });
    let turns = (phase % Lt) / Lt;
    let restE = e;
    orders.forEach((o, g) => {
      const eg = restE % o;
      restE = Math.floor(restE / o);
      turns += (x[g] * eg) / o;
    });
    turns -= Math.floor(turns);
    const q = Math.round(4 * turns);
    const [cos, sin] =
      Math.abs(4 * turns - q) < 1e-12 ? quarter[q % 4] : [Math.cos(2 * Math.PI * turns), Math.sin(2 * Math.PI * turns)];
    const sign = b ? f : 1;
    charRe[code] = sign * cos;
    charIm[code] = sign * sin;
    if (charIm[code] !== 0) complexCharacters = true;
  }
  const nReps = orbits.representatives;
  const sectorOfRep = new Int32Array(nReps).fill(-1);
  const repIndex = new Int32Array(nReps);
  const norm = new Float64Array(nReps);
  const stabStart = orbits.stabStart as Int32Array;
  const stabCodes = orbits.stabCodes as Uint16Array;
  let count = 0;
  for (let r = 0; r < nReps; r++) {
    if (label.charge !== null && orbits.charge[r] !== label.charge) continue;
    // n_r = sum over the stabilizer of chi: |S| (an exact integer) or 0 up to rounding
    let n = 1;
    for (let e = stabStart[r]; e < stabStart[r + 1]; e++) n += charRe[stabCodes[e]];
    if (n < 0.5) continue;
    sectorOfRep[r] = count;
    repIndex[count] = r;
    norm[count] = Math.round(n);
    count++;
  }
  return {
    charRe,
    charIm,
    complexCharacters,
    sectorOfRep,
    repIndex: repIndex.slice(0, count),
    norm: norm.slice(0, count),
  };
}
