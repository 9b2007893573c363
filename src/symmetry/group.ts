// Symmetries of pinned chains: how they act on basis indices, which ones a model really has
// (checked on the operator's matrix elements, never read from flags), and the sectors they label.
//
// Group elements are g = T^j P^a F^b, applied to a state as F first, then P, then T:
//   T  translation by one site, i -> i+1 (periodic chains),
//   P  chain reflection, i -> L-1-i,
//   F  level reflection, n -> N-1-n on every site,
// and the total level charge Q = sum_i n_i is a U(1) label when no term changes it.
//
// Off a chain, T is the group of lattice translations Z_L1 x Z_L2 (x ...), one cyclic factor per
// periodic direction, T^j = T_1^j1 T_2^j2 ... with j = j1 + L1 (j2 + L2 ...), each T_d the site
// permutation that moves every molecule one lattice step along direction d (taken from the site
// positions); there is no reflection, and sectors carry momentum [m1, m2, ...].

import { buildBasis, type PinnedBasis } from '../basis/basis.js';
import type { Geometry, Model } from '../model/model.js';
import { columnBuffer, PinnedColumns } from '../operator/pinnedRows.js';
import {
  allMomenta,
  chooseAutomorphisms,
  choosePointGroup,
  couplingAutomorphisms,
  fixesMomentum,
  latticeOperations,
  type PointGroup,
  type TranslationGroup,
} from './pointGroup.js';

export type { PointGroup, TranslationGroup } from './pointGroup.js';

export type SymmetryName = 'translation' | 'reflection' | 'level_flip' | 'charge' | 'point_group' | 'automorphism';
export const SYMMETRY_NAMES: readonly SymmetryName[] = [
  'translation',
  'reflection',
  'level_flip',
  'charge',
  'point_group',
  'automorphism',
];

/** Index arithmetic of the group generators on the mixed-radix pinned index (site 0 fastest). */
export class IndexActions {
  readonly L: number;
  readonly N: number;
  readonly dim: number;
  private readonly top: number; // N^(L-1)
  private readonly lowDigits: number;
  private readonly lowSize: number;
  private readonly highSize: number;
  private readonly reverseLow: Int32Array;
  private readonly reverseHigh: Int32Array;

  constructor(basis: PinnedBasis) {
    this.L = basis.sites;
    this.N = basis.levels;
    this.dim = basis.dim;
    this.top = Math.pow(this.N, this.L - 1);
    // Digit reversal through two lookup tables of about sqrt(dim) entries each.
    this.lowDigits = Math.floor(this.L / 2);
    this.lowSize = Math.pow(this.N, this.lowDigits);
    this.highSize = Math.pow(this.N, this.L - this.lowDigits);
    this.reverseLow = reversalTable(this.lowDigits, this.N);
    this.reverseHigh = reversalTable(this.L - this.lowDigits, this.N);
  }

  /** T: the level of site i moves to site i+1 (mod L). */
  translate(s: number): number {
    const q = Math.floor(s / this.top);
    return (s - q * this.top) * this.N + q;
  }

  /** P: the level of site i moves to site L-1-i. */
  reflect(s: number): number {
    const hi = Math.floor(s / this.lowSize);
    const lo = s - hi * this.lowSize;
    return this.reverseHigh[hi] + this.reverseLow[lo] * this.highSize;
  }

  /** F: n -> N-1-n on every site, which is dim-1-s in mixed radix. */
  flip(s: number): number {
    return this.dim - 1 - s;
  }

  charge(s: number): number {
    let q = 0;
    let r = s;
    for (let i = 0; i < this.L; i++) {
      const d = Math.floor(r / this.N);
      q += r - d * this.N;
      r = d;
    }
    return q;
  }
}

function reversalTable(digits: number, N: number): Int32Array {
  const size = Math.pow(N, digits);
  const table = new Int32Array(size);
  for (let s = 0; s < size; s++) {
    let r = s;
    let rev = 0;
    for (let i = 0; i < digits; i++) {
      const q = Math.floor(r / N);
      rev = rev * N + (r - q * N);
      r = q;
    }
    table[s] = rev;
  }
  return table;
}

/** How a site permutation (site i -> to[i]) acts on the pinned index, by two lookup tables of about sqrt(dim) entries. */
export class SitePermutation {
  private readonly lowSize: number;
  private readonly low: Float64Array;
  private readonly high: Float64Array;

  constructor(basis: { sites: number; levels: number }, to: ArrayLike<number>) {
    const L = basis.sites;
    const N = basis.levels;
    const lowDigits = Math.floor(L / 2);
    this.lowSize = Math.pow(N, lowDigits);
    // table[v] = sum over the digits d_i of v (sites from..from+count-1) of d_i N^to[i]
    const table = (from: number, count: number): Float64Array => {
      const out = new Float64Array(Math.pow(N, count));
      for (let v = 0; v < out.length; v++) {
        let r = v;
        let image = 0;
        for (let i = 0; i < count; i++) {
          const q = Math.floor(r / N);
          image += (r - q * N) * Math.pow(N, to[from + i]);
          r = q;
        }
        out[v] = image;
      }
      return out;
    };
    this.low = table(0, lowDigits);
    this.high = table(lowDigits, L - lowDigits);
  }

  apply(s: number): number {
    const hi = Math.floor(s / this.lowSize);
    return this.low[s - hi * this.lowSize] + this.high[hi];
  }
}

const SAME_POSITION = 1e-9;

/**
 * The translations of a non-chain geometry, or why there are none: a custom array or a lattice
 * without a periodic direction of at least 2 sites has none, and a vacancy that does not move onto
 * a vacancy breaks them. Site i goes to the site at p_i + step_d, up to whole periodic boxes.
 */
export function latticeTranslations(geometry: Geometry): TranslationGroup | string {
  if (geometry.shape === 'custom') return 'custom positions have no lattice translations';
  const directions = geometry.periodicDirections.filter((d) => d.size >= 2);
  if (directions.length === 0) return 'needs a periodic direction of at least 2 sites';
  const L = geometry.sites;
  const p = geometry.positions;
  let shifts: number[][] = [[0, 0, 0]];
  for (const box of geometry.boxes) {
    const next: number[][] = [];
    for (const s of shifts) for (const n of [0, -1, 1]) next.push(s.map((x, c) => x + n * box[c]));
    shifts = next;
  }
  const scale = Math.max(1, ...geometry.boxes.map((b) => Math.hypot(b[0], b[1], b[2])));
  const generators: Int32Array[] = [];
  for (const { direction, step } of directions) {
    const to = new Int32Array(L).fill(-1);
    for (let i = 0; i < L; i++) {
      const target = [0, 1, 2].map((c) => p[3 * i + c] + step[c]);
      for (let j = 0; j < L && to[i] < 0; j++)
        for (const s of shifts) {
          const off = Math.hypot(
            p[3 * j] + s[0] - target[0],
            p[3 * j + 1] + s[1] - target[1],
            p[3 * j + 2] + s[2] - target[2],
          );
          if (off <= SAME_POSITION * scale) {
            to[i] = j;
            break;
          }
        }
      if (to[i] < 0) return `a vacancy breaks the translation along direction ${direction}`;
    }
    generators.push(to);
  }
  return { sizes: directions.map((d) => d.size), generators };
}

/** The translation orders of a model's lattice, or null on chains (their one cyclic translation) and where there are none. */
export function translationSizes(model: { geometry?: Geometry }): number[] | null {
  const g = model.geometry;
  if (!g || g.isChain) return null;
  const t = latticeTranslations(g);
  return typeof t === 'string' ? null : t.sizes;
}

/** Mixed-radix code of a lattice momentum (first direction fastest); a chain's momentum is its own code. */
export function momentumCode(m: number | readonly number[], sizes: readonly number[] | null): number {
  if (typeof m === 'number') return m;
  let code = 0;
  for (let d = m.length - 1; d >= 0; d--) code = code * (sizes ? sizes[d] : 1) + m[d];
  return code;
}

/** Same momentum label (a chain's number or a lattice's list). */
export function sameMomentum(a: number | readonly number[], b: number | readonly number[]): boolean {
  if (typeof a === 'number' || typeof b === 'number') return a === b;
  return a.length === b.length && a.every((x, d) => x === b[d]);
}

export interface SymmetryCheck {
  name: SymmetryName;
  present: boolean;
  /** Why a candidate was rejected or how it was confirmed. */
  detail: string;
}

/**
 * Basis states on which matrix elements are compared: all of them for small bases, else 32 N^2
 * (at least 256). A term between two sites shows only in states with one particular pair of
 * levels there, met by a random state with probability 1/N^2; 32 N^2 samples miss a given pair of
 * levels with probability e^-32.
 */
function sampleCount(levels: number): number {
  return Math.max(256, 32 * levels * levels);
}

function sampleStates(dim: number, levels: number): number[] {
  const count = sampleCount(levels);
  if (dim <= count) return Array.from({ length: dim }, (_, k) => k);
  // Deterministic scatter over the whole index range (golden-ratio stride).
  const out: number[] = [];
  const step = 0.6180339887498949;
  for (let k = 0; k < count; k++) out.push(Math.floor(((k * step) % 1) * dim));
  return out;
}

/**
 * Which symmetries the operator has. A permutation g of basis states commutes with H exactly when
 * <g t|H|g s> = <t|H|s> for every s, t; this is compared column by column on a sample of basis
 * states (all states of small bases) to rounding. The charge commutes when no off-diagonal
 * element changes sum_i n_i. Each local term is met in a sample with certainty for practical sizes.
 */
export function detectSymmetries(model: Model, basis: PinnedBasis): SymmetryCheck[] {
  const actions = new IndexActions(basis);
  const columns = new PinnedColumns(model, basis);
  const a = columnBuffer(model);
  const samples = sampleStates(basis.dim, model.levels);
  const checks: SymmetryCheck[] = [];
  const commutes = commutationCheck(model, basis);

  const L = model.sites;
  const N = model.levels;
  // Site i -> i+1 and i -> L-1-i are a chain's translation and reflection only when the sites are a chain.
  const offChain = model.geometry.isChain
    ? null
    : `acts on chains only, and the lattice (shape "${model.geometry.shape}") is not one`;
  if (offChain !== null) {
    const group = latticeTranslations(model.geometry);
    if (typeof group === 'string') checks.push({ name: 'translation', present: false, detail: group });
    else {
      // The group is used whole: every generator must commute.
      const failing = group.generators.findIndex((to) => {
        const action = new SitePermutation(basis, to);
        return !commutes((s) => action.apply(s));
      });
      checks.push({
        name: 'translation',
        present: failing < 0,
        detail:
          failing < 0
            ? `lattice translations Z_${group.sizes.join(' x Z_')} commute with H`
            : `the translation along periodic direction ${failing} does not commute with H`,
      });
    }
    checks.push({ name: 'reflection', present: false, detail: offChain });
    // Mirrors and rotations of a lattice, or automorphisms of an array's couplings (pointGroupOf).
    const kind = pointGroupKind(model.geometry) as 'point_group' | 'automorphism';
    const other = kind === 'point_group' ? 'automorphism' : 'point_group';
    const point = pointGroupOf(model, basis);
    checks.push({
      name: kind,
      present: typeof point !== 'string',
      detail: typeof point === 'string' ? point : point.detail,
    });
    checks.push({
      name: other,
      present: false,
      detail:
        other === 'automorphism'
          ? 'a lattice without vacancies (or with its translations) uses point_group'
          : 'custom arrays and lattices whose vacancies break the translations use automorphism',
    });
  } else if (L < 3 || !model.chainPeriodic) {
    checks.push({ name: 'translation', present: false, detail: 'needs a periodic chain of at least 3 sites' });
  } else {
    const ok = commutes((s) => actions.translate(s));
    checks.push({ name: 'translation', present: ok, detail: ok ? 'commutes with H' : 'does not commute with H' });
  }
  if (offChain !== null) {
    // listed above
  } else if (L < 2) checks.push({ name: 'reflection', present: false, detail: 'needs at least 2 sites' });
  else {
    const ok = commutes((s) => actions.reflect(s));
    checks.push({ name: 'reflection', present: ok, detail: ok ? 'commutes with H' : 'does not commute with H' });
  }
  let charge = N >= 2;
  if (charge) {
    outer: for (const s of samples) {
      columns.of(s, a);
      const q = actions.charge(s);
      for (let k = 1; k < a.count; k++) {
        if ((a.re[k] !== 0 || a.im[k] !== 0) && actions.charge(a.targets[k]) !== q) {
          charge = false;
          break outer;
        }
      }
    }
  }
  checks.push({
    name: 'charge',
    present: charge,
    detail: charge
      ? 'no term changes the total level'
      : N < 2
        ? 'needs 2 levels'
        : 'synthetic tunnelling changes the total level',
  });
  if (N < 2) checks.push({ name: 'level_flip', present: false, detail: 'needs 2 levels' });
  else {
    const ok = commutes((s) => actions.flip(s));
    checks.push({ name: 'level_flip', present: ok, detail: ok ? 'commutes with H' : 'does not commute with H' });
  }
  return checks;
}

/** A test of whether a permutation g of basis states commutes with H, on the sample of `sampleStates`. */
function commutationCheck(model: Model, basis: PinnedBasis): (g: (s: number) => number) => boolean {
  const columns = new PinnedColumns(model, basis);
  const a = columnBuffer(model);
  const b = columnBuffer(model);
  const samples = sampleStates(basis.dim, model.levels);
  return (g) => {
    for (const s of samples) {
      columns.of(s, a);
      columns.of(g(s), b);
      if (!sameColumn(a, b, g)) return false;
    }
    return true;
  };
}

/** Which group of extra site permutations a geometry offers: none on chains (their reflection), point_group on lattices, automorphism on custom arrays and on lattices whose vacancies break the translations. */
export function pointGroupKind(geometry: Geometry): 'point_group' | 'automorphism' | null {
  if (geometry.isChain) return null;
  if (geometry.shape === 'custom') return 'automorphism';
  const vacancies = geometry.latticeIndex.some((v, i) => v !== i);
  if (vacancies && typeof latticeTranslations(geometry) === 'string') return 'automorphism';
  return 'point_group';
}

const pointGroups = new WeakMap<Model, PointGroup | string>();

/**
 * The abelian group of mirrors and rotations (lattices) or coupling automorphisms (custom arrays,
 * lattices with vacancies) whose every generator commutes with H, checked on matrix elements as the
 * other symmetries are; or why there is none. Computed once per model (pinned molecules only).
 */
export function pointGroupOf(model: Model, basis?: PinnedBasis): PointGroup | string {
  const known = pointGroups.get(model);
  if (known !== undefined) return known;
  const kind = pointGroupKind(model.geometry);
  let result: PointGroup | string;
  if (kind === null) result = 'acts off chains only (a chain has its reflection)';
  else {
    const b = basis ?? (buildBasis(model) as PinnedBasis);
    const check = commutationCheck(model, b);
    const commutes = (to: Int32Array) => {
      const action = new SitePermutation(b, to);
      return check((s) => action.apply(s));
    };
    if (kind === 'point_group') {
      const t = latticeTranslations(model.geometry);
      result = choosePointGroup(
        latticeOperations(model.geometry),
        commutes,
        typeof t === 'string' ? null : t,
        model.sites,
      );
    } else {
      const { found, capped } = couplingAutomorphisms(model.sites, [
        model.exchangePairs,
        model.isingPairs,
        model.hoppingBonds,
      ]);
      result = chooseAutomorphisms(found, capped, commutes, model.sites);
    }
  }
  pointGroups.set(model, result);
  return result;
}

/** Is column b (of g s) the image under g of column a (of s)? Order-free, duplicates summed. */
function sameColumn(
  a: { count: number; targets: Float64Array; re: Float64Array; im: Float64Array },
  b: typeof a,
  g: (s: number) => number,
): boolean {
  if (a.re[0] !== b.re[0] && Math.abs(a.re[0] - b.re[0]) > 1e-12 * Math.max(1, Math.abs(a.re[0]))) return false;
  const mapped = new Map<number, [number, number]>();
  let scale = 1;
  for (let k = 1; k < a.count; k++) {
    const t = g(a.targets[k]);
    const prev = mapped.get(t) ?? [0, 0];
    mapped.set(t, [prev[0] + a.re[k], prev[1] + a.im[k]]);
    scale = Math.max(scale, Math.abs(a.re[k]), Math.abs(a.im[k]));
  }
  for (let k = 1; k < b.count; k++) {
    const t = b.targets[k];
    const prev = mapped.get(t) ?? [0, 0];
    mapped.set(t, [prev[0] - b.re[k], prev[1] - b.im[k]]);
  }
  for (const [re, im] of mapped.values())
    if (Math.abs(re) > 1e-12 * scale || Math.abs(im) > 1e-12 * scale) return false;
  return true;
}

/** Quantum numbers of a sector; null where that symmetry is not used. */
export interface SectorLabel {
  /** m of the crystal momentum k = 2 pi m / L; on a lattice [m1, m2, ...], k_d = 2 pi m_d / L_d per periodic direction. */
  momentum: number | number[] | null;
  parity: 1 | -1 | null;
  level_flip: 1 | -1 | null;
  charge: number | null;
  /**
   * Characters of the point-group or automorphism generators used in this sector, by name: +1/-1
   * for a generator of order 2, else m with chi = exp(2 pi i m / order); null at a momentum no
   * generator leaves unchanged; absent when no point group is used.
   */
  point_group?: Record<string, number> | null;
}

/** A point-group label as text: `x=1,y=-1`, `C4=3`, `-` where none is used. */
export function pointGroupText(point: SectorLabel['point_group']): string {
  if (!point) return '-';
  return Object.entries(point)
    .map(([name, v]) => `${name}=${v}`)
    .join(',');
}

/** A momentum label as text: `3` on a chain, `(1,0)` on a lattice, `-` when translations are not used. */
export function momentumText(momentum: SectorLabel['momentum']): string {
  if (momentum === null) return '-';
  return typeof momentum === 'number' ? String(momentum) : `(${momentum.join(',')})`;
}

export interface SectorPlan {
  label: SectorLabel;
  /** Sectors with the same spectrum that are not solved separately (k <-> -k, by reflection or by a real H). */
  copies: SectorLabel[];
}

export interface SectorSelection {
  momentum?: (number | number[])[];
  parity?: (1 | -1)[];
  level_flip?: (1 | -1)[];
  charge?: number[];
  /** Allowed characters per generator name (sectors that do not use a generator are kept). */
  point_group?: Record<string, number[]>;
}

/** The generators of a point group used at momentum m (all of them without translations): those with g k = k. */
export function pointGeneratorsAt(group: PointGroup, m: number | number[] | null, sizes: number[] | null): number[] {
  return group.names
    .map((_, g) => g)
    .filter((g) => m === null || typeof m === 'number' || !sizes || fixesMomentum(group, g, m, sizes));
}

/** Every character label of the given generators: +1/-1 for order 2, m = 0 .. order-1 otherwise. */
function pointCharacterLabels(group: PointGroup, gens: number[]): Record<string, number>[] {
  let out: Record<string, number>[] = [{}];
  for (const g of gens) {
    const values = group.orders[g] === 2 ? [1, -1] : Array.from({ length: group.orders[g] }, (_, m) => m);
    out = out.flatMap((l) => values.map((v) => ({ ...l, [group.names[g]]: v })));
  }
  return out;
}

/** The point group a solve uses (or null), from the symmetries in use. */
export function pointGroupInUse(use: Record<SymmetryName, boolean>, model: Model): PointGroup | null {
  if (!use.point_group && !use.automorphism) return null;
  const group = pointGroupOf(model);
  if (typeof group === 'string') throw new Error(`point group used, but none was found: ${group}`);
  return group;
}

/**
 * The sectors to solve for the symmetries in use. Reflection labels only k = 0 and k = pi, where it
 * commutes with translations; there and for open chains it is a good quantum number. The level
 * flip is dropped when the charge is used, since F maps charge q to L(N-1)-q. A point-group
 * generator labels only the momenta it leaves unchanged (g k = k), where t g acts with the
 * character exp(i k.t) chi(g); elsewhere the sector carries momentum alone.
 */
export function planSectors(
  use: Record<SymmetryName, boolean>,
  model: Model,
  selection: SectorSelection = {},
): SectorPlan[] {
  const L = model.sites;
  const N = model.levels;
  const sizes = use.translation ? translationSizes(model) : null;
  const point = pointGroupInUse(use, model);
  let momenta: (number | number[] | null)[] = use.translation ? Array.from({ length: L }, (_, m) => m) : [null];
  if (sizes) {
    // every [m1, m2, ...], first direction fastest
    const count = sizes.reduce((a, b) => a * b, 1);
    momenta = Array.from({ length: count }, (_, code) =>
      sizes.map((size, d) => Math.floor(code / sizes.slice(0, d).reduce((a, b) => a * b, 1)) % size),
    );
  }
  // A sector and its complex conjugate (-k, conjugate characters) share their spectrum when H is
  // real; on chains the reflection also maps k onto -k.
  const pairByReflection = use.translation && use.reflection;
  const pairs = pairByReflection || !model.isComplex;
  const charges = use.charge ? Array.from({ length: L * (N - 1) + 1 }, (_, q) => q) : [null];
  const flips: (1 | -1 | null)[] = use.level_flip && !use.charge ? [1, -1] : [null];
  const plans: SectorPlan[] = [];
  const wanted = <T>(list: T[] | undefined, v: T | null) => v === null || !list || list.includes(v);
  const wantedMomentum = (m: number | number[] | null) =>
    m === null || !selection.momentum || selection.momentum.some((x) => sameMomentum(x, m));
  const wantedPoint = (p: SectorLabel['point_group']) =>
    !selection.point_group ||
    !p ||
    Object.entries(selection.point_group).every(([name, list]) => !(name in p) || list.includes(p[name]));
  const negated = (m: number | number[]): number | number[] =>
    typeof m === 'number' ? (L - m) % L : m.map((x, d) => ((sizes as number[])[d] - x) % (sizes as number[])[d]);
  const conjugated = (p: Record<string, number> | null): Record<string, number> | null => {
    if (!p || !point) return p;
    const out: Record<string, number> = {};
    for (const [name, v] of Object.entries(p)) {
      const order = point.orders[point.names.indexOf(name)];
      out[name] = order === 2 ? v : (order - v) % order;
    }
    return out;
  };
  const pointCode = (p: Record<string, number> | null): number => {
    if (!p || !point) return 0;
    let code = 0;
    point.names.forEach((name, g) => {
      const order = point.orders[g];
      const v = p[name] ?? 0;
      code = code * (order + 1) + (order === 2 ? (v === 1 ? 0 : 1) : v);
    });
    return code;
  };
  const samePoint = (a: Record<string, number> | null, b: Record<string, number> | null) =>
    JSON.stringify(a) === JSON.stringify(b);
  for (const q of charges) {
    if (!wanted(selection.charge, q)) continue;
    for (const m of momenta) {
      const partner = m === null ? null : negated(m);
      const selfPaired = m === null || sameMomentum(partner as number | number[], m);
      const parities: (1 | -1 | null)[] = use.reflection && (m === null || selfPaired) ? [1, -1] : [null];
      const gens = point ? pointGeneratorsAt(point, m, sizes) : [];
      const pointLabels: (Record<string, number> | null)[] =
        point && gens.length > 0 ? pointCharacterLabels(point, gens) : [null];
      for (const pl of pointLabels) {
        const pointPartner = conjugated(pl);
        const labelSelfPaired = selfPaired && samePoint(pl, pointPartner);
        for (const p of parities) {
          for (const f of flips) {
            const label: SectorLabel = { momentum: m, parity: p, level_flip: f, charge: q };
            if (point) label.point_group = pl;
            const copies: SectorLabel[] = [];
            if (pairs && !labelSelfPaired) {
              const partnerLabel: SectorLabel = { ...label, momentum: partner };
              if (point) partnerLabel.point_group = pointPartner;
              const code = (l: SectorLabel) =>
                (l.momentum === null ? 0 : momentumCode(l.momentum, sizes)) * 1e6 + pointCode(l.point_group ?? null);
              if (code(label) > code(partnerLabel)) continue; // solved as the copy of its partner
              copies.push(partnerLabel);
            }
            const keep = (l: SectorLabel) =>
              wantedMomentum(l.momentum) &&
              wanted(selection.parity, l.parity) &&
              wanted(selection.level_flip, l.level_flip) &&
              wantedPoint(l.point_group);
            const kept = [label, ...copies].filter(keep);
            if (kept.length === 0) continue;
            plans.push({ label: kept[0], copies: kept.slice(1) });
          }
        }
      }
    }
  }
  return plans;
}

/** How many orbit maps a solve builds: one per distinct group its sectors use (each holds 6 bytes per basis state). */
export function orbitMapCount(model: Model, use: Record<SymmetryName, boolean>): number {
  const point = pointGroupInUse(use, model);
  if (!point) return use.reflection && use.translation ? 2 : 1;
  const sizes = use.translation ? translationSizes(model) : null;
  const momenta = sizes ? allMomenta(sizes) : [null];
  return new Set(momenta.map((m) => pointGeneratorsAt(point, m, sizes).join(','))).size;
}
