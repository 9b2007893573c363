// Symmetries of pinned chains: how they act on basis indices, which ones a model really has
// (checked on the operator's matrix elements, never read from flags), and the sectors they label.
//
// Group elements are g = T^j P^a F^b, applied to a state as F first, then P, then T:
//   T  translation by one site, i -> i+1 (periodic chains),
//   P  chain reflection, i -> L-1-i,
//   F  level reflection, n -> N-1-n on every site,
// and the total level charge Q = sum_i n_i is a U(1) label when no term changes it.

import type { PinnedBasis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
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
    checks.push({ name: 'translation', present: false, detail: offChain });
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
  /** m of the crystal momentum k = 2 pi m / L. */
  momentum: number | null;
  parity: 1 | -1 | null;
  level_flip: 1 | -1 | null;
  charge: number | null;
}

export interface SectorPlan {
  label: SectorLabel;
  /** Sectors with the same spectrum that are not solved separately (k <-> -k, by reflection or by a real H). */
  copies: SectorLabel[];
}

export interface SectorSelection {
  momentum?: number[];
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
  const momenta = use.translation ? Array.from({ length: L }, (_, m) => m) : [null];
  // k and -k share their spectrum when reflection or complex conjugation (real H) maps one onto the other.
  const pairMomenta = use.translation && (use.reflection || !model.isComplex);
  const charges = use.charge ? Array.from({ length: L * (N - 1) + 1 }, (_, q) => q) : [null];
  const flips: (1 | -1 | null)[] = use.level_flip && !use.charge ? [1, -1] : [null];
  const plans: SectorPlan[] = [];
  const wanted = <T>(list: T[] | undefined, v: T | null) => v === null || !list || list.includes(v);
  for (const q of charges) {
    if (!wanted(selection.charge, q)) continue;
    for (const m of momenta) {
      const partner = m === null ? null : (L - m) % L;
      const selfPaired = m === null || partner === m;
      const parities: (1 | -1 | null)[] = use.reflection && (m === null || selfPaired) ? [1, -1] : [null];
      for (const p of parities) {
        for (const f of flips) {
          const label: SectorLabel = { momentum: m, parity: p, level_flip: f, charge: q };
          const copies: SectorLabel[] = [];
          if (pairMomenta && !selfPaired && m !== null && partner !== null) {
            if (m > partner) continue; // solved as the copy of its partner
            copies.push({ ...label, momentum: partner });
          }
          const keep = (l: SectorLabel) =>
            wanted(selection.momentum, l.momentum) &&
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
