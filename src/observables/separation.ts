// level_correlation as a function of the separation vector (docs/model.md), on geometries with
// translations: the pairs (i, j) are grouped by the minimum-image separation r_j - r_i, and the
// connected correlation is averaged within each group.
//
// Translation-invariant here means: a lattice shape (not custom), no vacancies, at least one periodic
// direction, and every open direction at most 2 sites wide (a ladder's legs): then the pairs sharing
// a separation vector are translates of each other along the periodic directions. Elsewhere the
// grouping would mix inequivalent pairs, so the observable is null.
//
// Two separations that differ by a box vector are the same vector on the torus; each group is
// labelled by its shortest representative among r_j - r_i + sum_d n_d B_d, n_d in -2..2, and when
// several are equally short (half a box) by the one largest in (x, y, z) order, so every pair of a
// group finds the same label.

import type { Geometry } from '../model/model.js';
import type { LatticeSpec } from '../spec/lattice.js';

export interface SeparationClass {
  /** The minimum-image separation vector r_j - r_i (x, y, z, in the positions' units). */
  separation: [number, number, number];
  /** Its length. */
  distance: number;
  /** Ordered site pairs (i, j) with this separation, as i * sites + j. */
  pairs: Int32Array;
}

/** One entry of level_correlation_by_separation. */
export interface SeparationCorrelation {
  separation: [number, number, number];
  distance: number;
  /** How many ordered pairs (i, j) share the separation (i = j counted for the zero vector). */
  pairs: number;
  /** Their average of level_correlation[i][j]. */
  value: number;
}

/** Separations within this (relative to 1) are the same: the positions are sums of a few spacings. */
const SAME = 1e-9;
const key = (v: readonly number[]): string => v.map((x) => Math.round(x / SAME) || 0).join(',');

/** Whether the sites have translations in the sense above; `lattice` null for a plain [chain]. */
export function hasTranslations(geometry: Geometry, lattice: LatticeSpec | null): boolean {
  if (lattice === null) return geometry.isRing;
  if (lattice.shape === 'custom' || lattice.vacancies.length > 0 || geometry.boxes.length === 0) return false;
  return lattice.size.every((n, d) => n <= 2 || lattice.boundary[d] === 'periodic');
}

/** The groups of site pairs by separation vector, ordered by distance then vector; null without translations. */
export function separationClasses(geometry: Geometry, lattice: LatticeSpec | null): SeparationClass[] | null {
  if (!hasTranslations(geometry, lattice)) return null;
  const L = geometry.sites;
  const p = geometry.positions;
  let shifts: number[][] = [[0, 0, 0]];
  for (const B of geometry.boxes)
    shifts = shifts.flatMap((s) => [-2, -1, 0, 1, 2].map((n) => [s[0] + n * B[0], s[1] + n * B[1], s[2] + n * B[2]]));
  const groups = new Map<string, { separation: [number, number, number]; distance: number; pairs: number[] }>();
  for (let i = 0; i < L; i++) {
    for (let j = 0; j < L; j++) {
      let best: [number, number, number] | null = null;
      let bestLength = Infinity;
      for (const s of shifts) {
        const v: [number, number, number] = [
          p[3 * j] - p[3 * i] + s[0],
          p[3 * j + 1] - p[3 * i + 1] + s[1],
          p[3 * j + 2] - p[3 * i + 2] + s[2],
        ];
        const length = Math.hypot(v[0], v[1], v[2]);
        const tied = best !== null && Math.abs(length - bestLength) <= SAME * Math.max(1, bestLength);
        if ((!tied && length < bestLength) || (tied && larger(v, best!))) {
          best = v;
          bestLength = tied ? Math.min(length, bestLength) : length;
        }
      }
      const label = key(best!);
      const group = groups.get(label);
      if (group) group.pairs.push(i * L + j);
      else groups.set(label, { separation: best!, distance: bestLength, pairs: [i * L + j] });
    }
  }
  return [...groups.values()]
    .sort((a, b) =>
      a.distance - b.distance > SAME ? 1 : b.distance - a.distance > SAME ? -1 : compare(a.separation, b.separation),
    )
    .map((g) => ({
      separation: g.separation.map((x) => (Math.abs(x) < SAME ? 0 : x)) as [number, number, number],
      distance: g.distance,
      pairs: Int32Array.from(g.pairs),
    }));
}

/** Whether u comes after v in (x, y, z) order, coordinates within SAME counting as equal. */
function larger(u: readonly number[], v: readonly number[]): boolean {
  return compare(u, v) > 0;
}

function compare(u: readonly number[], v: readonly number[]): number {
  for (let c = 0; c < 3; c++) if (Math.abs(u[c] - v[c]) > SAME) return u[c] - v[c];
  return 0;
}

/** The average of correlation[i][j] over each group of pairs; null without translations. */
export function levelCorrelationBySeparation(
  correlation: number[][],
  classes: readonly SeparationClass[] | null,
): SeparationCorrelation[] | null {
  if (classes === null) return null;
  const L = correlation.length;
  return classes.map((g) => {
    let sum = 0;
    for (const ij of g.pairs) sum += correlation[Math.floor(ij / L)][ij % L];
    return { separation: [...g.separation], distance: g.distance, pairs: g.pairs.length, value: sum / g.pairs.length };
  });
}
