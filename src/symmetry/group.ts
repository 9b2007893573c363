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

import type { PinnedBasis } from '../basis/basis.js';
import type { Geometry, Model } from '../model/model.js';
import { columnBuffer, PinnedColumns } from '../operator/pinnedRows.js';

export type SymmetryName = 'translation' | 'reflection' | 'level_flip' | 'charge';
export const SYMMETRY_NAMES: readonly SymmetryName[] = ['translation', 'reflection', 'level_flip', 'charge'];

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

/** The lattice translations of a geometry off a chain: per periodic direction its order and its site permutation. */
export interface TranslationGroup {
  sizes: number[];
  /** Site i -> generators[d][i] under one step along the d-th periodic direction. */
  generators: Int32Array[];
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
  const b = columnBuffer(model);
  const samples = sampleStates(basis.dim, model.levels);
  const checks: SymmetryCheck[] = [];

  const commutes = (g: (s: number) => number): boolean => {
    for (const s of samples) {
      columns.of(s, a);
      columns.of(g(s), b);
      if (!sameColumn(a, b, g)) return false;
    }
    return true;
  };

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
}

/**
 * The sectors to solve for the symmetries in use. Reflection labels only k = 0 and k = pi, where it
 * commutes with translations; there and for open chains it is a good quantum number. The level
 * flip is dropped when the charge is used, since F maps charge q to L(N-1)-q.
 */
export function planSectors(
  use: Record<SymmetryName, boolean>,
  model: Model,
  selection: SectorSelection = {},
): SectorPlan[] {
  const L = model.sites;
  const N = model.levels;
  const sizes = use.translation ? translationSizes(model) : null;
  let momenta: (number | number[] | null)[] = use.translation ? Array.from({ length: L }, (_, m) => m) : [null];
  if (sizes) {
    // every [m1, m2, ...], first direction fastest
    const count = sizes.reduce((a, b) => a * b, 1);
    momenta = Array.from({ length: count }, (_, code) =>
      sizes.map((size, d) => Math.floor(code / sizes.slice(0, d).reduce((a, b) => a * b, 1)) % size),
    );
  }
  // k and -k share their spectrum when reflection or complex conjugation (real H) maps one onto the other.
  const pairMomenta = use.translation && (use.reflection || !model.isComplex);
  const charges = use.charge ? Array.from({ length: L * (N - 1) + 1 }, (_, q) => q) : [null];
  const flips: (1 | -1 | null)[] = use.level_flip && !use.charge ? [1, -1] : [null];
  const plans: SectorPlan[] = [];
  const wanted = <T>(list: T[] | undefined, v: T | null) => v === null || !list || list.includes(v);
  const wantedMomentum = (m: number | number[] | null) =>
    m === null || !selection.momentum || selection.momentum.some((x) => sameMomentum(x, m));
  const negated = (m: number | number[]): number | number[] =>
    typeof m === 'number' ? (L - m) % L : m.map((x, d) => ((sizes as number[])[d] - x) % (sizes as number[])[d]);
  for (const q of charges) {
    if (!wanted(selection.charge, q)) continue;
    for (const m of momenta) {
      const partner = m === null ? null : negated(m);
      const selfPaired = m === null || sameMomentum(partner as number | number[], m);
      const parities: (1 | -1 | null)[] = use.reflection && (m === null || selfPaired) ? [1, -1] : [null];
      for (const p of parities) {
        for (const f of flips) {
          const label: SectorLabel = { momentum: m, parity: p, level_flip: f, charge: q };
          const copies: SectorLabel[] = [];
          if (pairMomenta && !selfPaired && m !== null && partner !== null) {
            if (momentumCode(m, sizes) > momentumCode(partner, sizes)) continue; // solved as the copy of its partner
            copies.push({ ...label, momentum: partner });
          }
          const keep = (l: SectorLabel) =>
            wantedMomentum(l.momentum) &&
            wanted(selection.parity, l.parity) &&
            wanted(selection.level_flip, l.level_flip);
          const kept = [label, ...copies].filter(keep);
          if (kept.length === 0) continue;
          plans.push({ label: kept[0], copies: kept.slice(1) });
        }
      }
    }
  }
  return plans;
}
