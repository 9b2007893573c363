// Dimensions of the symmetry sectors of a pinned chain, counted without building anything.
//
// The basis states are the N^L level configurations, and every symmetry in use permutes them
// (translations and the reflection permute sites, the level flip maps n to N-1-n), so the sector
// of a one-dimensional character chi of the group H it is labelled by has dimension
//
//   dim = (1/|H|) sum_{h in H} conj(chi(h)) Fix_q(h),
//
// the multiplicity of chi in a permutation representation (the trace of the projector onto it),
// where Fix_q(h) counts the configurations of total level q (any q when the charge is not used)
// that h leaves unchanged. Fix_q follows from the cycles of h's site permutation: a fixed
// configuration is constant on each cycle (without the flip), or alternates n, N-1-n around it (with
// the flip: N choices on an even cycle, one on an odd cycle when N is odd, none otherwise). The
// counts are exact; Burnside's lemma is the special case of the trivial character.

import type { Geometry, Model } from '../model/model.js';
import { groupElements, compose } from './pointGroup.js';
import {
  latticeTranslations,
  planSectors,
  pointGroupInUse,
  type SectorLabel,
  type SectorSelection,
  type SymmetryName,
} from './group.js';

export interface SectorSize {
  label: SectorLabel;
  /** Sectors reported as copies of this one (same spectrum), not solved again. */
  copies: number;
  dimension: number;
}

interface GroupElement {
  /** Power of the translation (0 without translations); on a lattice the code j of T^j. */
  shift: number;
  reflected: boolean;
  flipped: boolean;
  /** Lengths of the cycles of the site permutation. */
  cycles: number[];
  /** Exponent of each point-group generator (empty without a point group). */
  point: number[];
}

/** Every sector the solve will use (after `selection`), with its exact dimension. */
export function sectorSizes(
  model: Pick<Model, 'sites' | 'levels' | 'isComplex'> & { geometry?: Geometry },
  used: Record<SymmetryName, boolean>,
  selection: SectorSelection = {},
): SectorSize[] {
  const L = model.sites;
  const N = model.levels;
  const flipUsed = used.level_flip && !used.charge;
  const elements: GroupElement[] = [];
  const lattice =
    used.translation && model.geometry && !model.geometry.isChain ? latticeTranslations(model.geometry) : null;
  if (typeof lattice === 'string') throw new Error(`no lattice translations: ${lattice}`);
  const point = pointGroupInUse(used, model as Model);
  if (lattice || point) {
    // T^j = T_1^j1 T_2^j2 ..., j = j1 + L1 (j2 + ...), times every point element p_e (code e =
    // e1 + o1 (e2 + ...)): the site permutation of T^j p_e
    const translations = lattice
      ? groupElements(lattice.generators, lattice.sizes, L)
      : [Int32Array.from({ length: L }, (_, i) => i)];
    const points = point
      ? groupElements(point.generators, point.orders, L)
      : [Int32Array.from({ length: L }, (_, i) => i)];
    translations.forEach((t, shift) =>
      points.forEach((p, e) => {
        let rest = e;
        const exponents = (point?.orders ?? []).map((o) => {
          const x = rest % o;
          rest = Math.floor(rest / o);
          return x;
        });
        const cycles = permutationCycles(compose(t, p));
        for (const flipped of flipUsed ? [false, true] : [false])
          elements.push({ shift, reflected: false, flipped, cycles, point: exponents });
      }),
    );
  } else
    for (let shift = 0; shift < (used.translation ? L : 1); shift++) {
      for (const reflected of used.reflection ? [false, true] : [false]) {
        for (const flipped of flipUsed ? [false, true] : [false]) {
          elements.push({ shift, reflected, flipped, cycles: cycleLengths(L, shift, reflected), point: [] });
        }
      }
    }
  // chi(g) as a fraction of a turn: the momentum's and the point group's
  const turns = (momentum: SectorLabel['momentum'], shift: number): number => {
    if (momentum === null) return 0;
    if (!lattice) return ((momentum as number) * shift) / L;
    let phase = 0;
    let rest = shift;
    lattice.sizes.forEach((size, d) => {
      phase += ((momentum as number[])[d] * (rest % size)) / size;
      rest = Math.floor(rest / size);
    });
    return phase;
  };
  const pointTurns = (label: SectorLabel, g: GroupElement): number | null => {
    if (!point) return 0;
    let sum = 0;
    for (let k = 0; k < point.names.length; k++) {
      const v = label.point_group?.[point.names[k]];
      if (v === undefined) {
        if (g.point[k] !== 0) return null; // not in this sector's group
        continue;
      }
      const x = point.orders[k] === 2 ? (v === -1 ? 1 : 0) : v;
      sum += (x * g.point[k]) / point.orders[k];
    }
    return sum;
  };
  const fixedCache = new Map<number | null, number[]>();
  const fixed = (q: number | null): number[] => {
    let counts = fixedCache.get(q);
    if (!counts) {
      counts = elements.map((g) => fixedConfigurations(g, N, q));
      fixedCache.set(q, counts);
    }
    return counts;
  };

  return planSectors(used, model as Model, selection).map((plan) => {
    const { momentum, parity, level_flip: flip, charge } = plan.label;
    const counts = fixed(charge);
    let sum = 0;
    let order = 0;
    elements.forEach((g, e) => {
      // A reflection belongs to the sector's group only where parity labels it (k = 0, pi, or no translations).
      if (g.reflected && parity === null) return;
      const inPoint = pointTurns(plan.label, g);
      if (inPoint === null) return;
      order++;
      let chi = Math.cos(2 * Math.PI * (turns(momentum, g.shift) + inPoint));
      if (g.reflected) chi *= parity as number;
      if (g.flipped) chi *= flip as number;
      sum += chi * counts[e];
    });
    // The sine parts cancel between T^j and its inverse, which fix equally many configurations.
    return { label: plan.label, copies: plan.copies.length, dimension: Math.round(sum / order) || 0 };
  });
}

/** Cycle lengths of the site permutation i -> to[i]. */
function permutationCycles(to: Int32Array): number[] {
  const seen = new Uint8Array(to.length);
  const lengths: number[] = [];
  for (let start = 0; start < to.length; start++) {
    if (seen[start]) continue;
    let length = 0;
    for (let i = start; !seen[i]; i = to[i]) {
      seen[i] = 1;
      length++;
    }
    lengths.push(length);
  }
  return lengths;
}

/** Cycle lengths of the site permutation i -> (r(i) + shift) mod L, r the reflection i -> L-1-i or the identity. */
function cycleLengths(L: number, shift: number, reflected: boolean): number[] {
  const image = (i: number): number => ((reflected ? L - 1 - i : i) + shift) % L;
  const seen = new Uint8Array(L);
  const lengths: number[] = [];
  for (let start = 0; start < L; start++) {
    if (seen[start]) continue;
    let length = 0;
    for (let i = start; !seen[i]; i = image(i)) {
      seen[i] = 1;
      length++;
    }
    lengths.push(length);
  }
  return lengths;
}

/** Configurations (of total level q, or any when q is null) that a group element leaves unchanged. */
function fixedConfigurations(g: GroupElement, N: number, q: number | null): number {
  if (g.flipped) {
    // The flip is never combined with the charge.
    let count = 1;
    for (const length of g.cycles) count *= length % 2 === 0 ? N : N % 2 === 1 ? 1 : 0;
    return count;
  }
  if (q === null) return N ** g.cycles.length;
  // Coefficient of x^q in prod over cycles of (1 + x^len + x^(2 len) + ... + x^((N-1) len)).
  let ways = new Float64Array(q + 1);
  ways[0] = 1;
  for (const length of g.cycles) {
    const next = new Float64Array(q + 1);
    for (let total = 0; total <= q; total++) {
      if (ways[total] === 0) continue;
      for (let level = 0; level < N && total + level * length <= q; level++)
        next[total + level * length] += ways[total];
    }
    ways = next;
  }
  return ways[q];
}
