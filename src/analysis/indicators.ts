// Transition indicators along one scanned axis, as pure functions over arrays.
//
// Each indicator is a curve over the axis (its own x: midpoints for first differences, interior
// points for second differences) and, when it has one, its peak: the position where a transition
// on a finite chain most likely sits. Peak positions come with an uncertainty from the grid spacing.
//
//   gap              gap_above_ground (E1 - E0 for records without it); a transition shows as a minimum
//   fidelity         chi_F per site = -2 ln F / (delta^2 L), F = |<psi(x)|psi(x + delta)>|
//                    (Zanardi and Paunkovic, PRE 74, 031123 (2006); You, Li and Gu, PRE 76, 022101 (2007))
//   curvature        -d2E0/dx2 per site (second-order transitions peak here)
//   width_slope      d(string width)/dx; the steepest change is reported (peak of |slope|)
//
// A level crossing (see crossings.ts) is no smooth peak: an indicator whose extremum sits on a
// crossing is of kind "crossing" and names it; the fidelity of a pair across a crossing is not a
// susceptibility and is left out of its curve.

import type { Crossing } from './crossings.js';

export interface Peak {
  /** Best estimate of the extremum's position (vertex of a parabola through the grid extremum and its neighbours). */
  position: number;
  /** The curve's value there (the parabola's value at its vertex). */
  value: number;
  /** Half the local grid spacing; a full spacing when the extremum is at the end of the scan. */
  uncertainty: number;
  /** True when the extremum is the first or last grid point: the true peak may lie outside the scan. */
  at_edge: boolean;
  /**
   * True when position and value are the parabola's vertex; false when they are the extremal grid
   * point itself (at the edge, on a flat stretch, or when the vertex would leave its bracketing
   * points or fall below the quantity's lower bound, e.g. a negative gap).
   */
  refined: boolean;
}

export interface Curve {
  x: number[];
  y: number[];
}

export type IndicatorName = 'gap' | 'fidelity' | 'curvature' | 'width_slope';

export interface Indicator extends Curve {
  name: IndicatorName;
  /** Human-readable label for tables and plots. */
  label: string;
  /** The record quantity the curve is built from (`gap_above_ground` or `gap` for the gap). */
  uses: string;
  /** Which extremum marks the transition. */
  extremum: 'min' | 'max' | 'max_abs';
  peak: Peak | null;
  /**
   * "crossing": the extremum sits on a level crossing (`crossing` names it; `peak` is the smooth
   * curve's own extremum away from it); "edge": at the end of the scan; "peak": a smooth extremum.
   */
  kind: 'crossing' | 'peak' | 'edge';
  crossing?: Crossing;
}

/** Drops non-finite pairs and sorts by x (scans may run in any order, and failed points leave holes). */
export function cleanCurve(x: ArrayLike<number>, y: ArrayLike<number | null | undefined>): Curve {
  const pairs: [number, number][] = [];
  for (let k = 0; k < Math.min(x.length, y.length); k++) {
    const yk = y[k];
    if (typeof yk === 'number' && Number.isFinite(x[k]) && Number.isFinite(yk)) pairs.push([x[k], yk]);
  }
  pairs.sort((a, b) => a[0] - b[0]);
  return { x: pairs.map((p) => p[0]), y: pairs.map((p) => p[1]) };
}

/**
 * The extremum of a curve sampled on an ascending grid, refined by the parabola through the
 * extremal sample and its two neighbours (common practice). `max_abs` looks for the largest |y|.
 * `lowerBound` is a value the quantity never goes below (0 for a gap): a parabola whose vertex would
 * dip below it (a kink such as a level crossing is no parabola) is not used, and the grid point is
 * reported instead, marked `refined: false`.
 */
export function findPeak(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  extremum: 'min' | 'max' | 'max_abs' = 'max',
  options: { lowerBound?: number } = {},
): Peak | null {
  const n = Math.min(x.length, y.length);
  if (n === 0) return null;
  const bound = options.lowerBound ?? -Infinity;
  const score = (k: number) => (extremum === 'min' ? -y[k] : extremum === 'max_abs' ? Math.abs(y[k]) : y[k]);
  let best = 0;
  for (let k = 1; k < n; k++) if (score(k) > score(best)) best = k;
  if (n === 1) return { position: x[0], value: Math.max(y[0], bound), uncertainty: 0, at_edge: true, refined: false };
  if (best === 0 || best === n - 1) {
    const neighbour = best === 0 ? 1 : n - 2;
    return {
      position: x[best],
      value: Math.max(y[best], bound),
      uncertainty: Math.abs(x[best] - x[neighbour]),
      at_edge: true,
      refined: false,
    };
  }
  const x0 = x[best - 1];
  const x1 = x[best];
  const x2 = x[best + 1];
  const y0 = y[best - 1];
  const y1 = y[best];
  const y2 = y[best + 1];
  const uncertainty = (x2 - x0) / 4;
  const gridPoint: Peak = { position: x1, value: Math.max(y1, bound), uncertainty, at_edge: false, refined: false };
  // Parabola through three points on a possibly uneven grid, in divided differences.
  const d01 = (y1 - y0) / (x1 - x0);
  const d12 = (y2 - y1) / (x2 - x1);
  const a = (d12 - d01) / (x2 - x0);
  if (a === 0 || !Number.isFinite(a)) return gridPoint;
  const b = d01 - a * (x0 + x1);
  const vertex = -b / (2 * a);
  // For an interior extremum the vertex lies between the neighbours; only rounding puts it outside.
  if (!(vertex >= x0 && vertex <= x2)) return gridPoint;
  const value = quadraticAt(x0, x1, x2, y0, y1, y2, vertex);
  if (!(value >= bound)) return gridPoint;
  return { position: vertex, value, uncertainty, at_edge: false, refined: true };
}

function quadraticAt(x0: number, x1: number, x2: number, y0: number, y1: number, y2: number, t: number): number {
  // Lagrange form: exact for the parabola through the three points.
  return (
    (y0 * (t - x1) * (t - x2)) / ((x0 - x1) * (x0 - x2)) +
    (y1 * (t - x0) * (t - x2)) / ((x1 - x0) * (x1 - x2)) +
    (y2 * (t - x0) * (t - x1)) / ((x2 - x0) * (x2 - x1))
  );
}

/**
 * Fidelity susceptibility per site from overlaps of neighbouring ground states:
 * chi_F = -2 ln F / (delta^2 L) at the midpoint of each pair (to O(delta^2) the same as
 * 2 (1 - F) / (delta^2 L); the logarithm is additive over independent modes, so it stays exact
 * for free-fermion chains at any delta). Pairs with a missing overlap are skipped.
 */
export function fidelitySusceptibility(
  pairs: ArrayLike<{ from: number; to: number; overlap: number | null | undefined }>,
  sites: number,
): Curve {
  const x: number[] = [];
  const y: number[] = [];
  for (let k = 0; k < pairs.length; k++) {
    const { from, to, overlap } = pairs[k];
    const delta = to - from;
    if (typeof overlap !== 'number' || !Number.isFinite(overlap) || delta === 0) continue;
    // |overlap| may exceed 1 by rounding; F = 1 means no change at all.
    const F = Math.min(Math.abs(overlap), 1);
    x.push((from + to) / 2);
    y.push((-2 * Math.log(F)) / (delta * delta * sites));
  }
  return cleanCurve(x, y);
}

/** Fidelity pairs from an ascending line of points that each carry the overlap with the previous one. */
export function consecutivePairs(
  x: ArrayLike<number>,
  overlapPrevious: ArrayLike<number | null | undefined>,
): { from: number; to: number; overlap: number | null | undefined }[] {
  const pairs = [];
  for (let k = 1; k < x.length; k++) pairs.push({ from: x[k - 1], to: x[k], overlap: overlapPrevious[k] });
  return pairs;
}

/** -d2y/dx2 / sites at the interior points of an ascending, possibly uneven grid (three-point divided differences). */
export function negativeCurvature(x: ArrayLike<number>, y: ArrayLike<number>, sites: number): Curve {
  const out: Curve = { x: [], y: [] };
  for (let k = 1; k + 1 < x.length; k++) {
    const d01 = (y[k] - y[k - 1]) / (x[k] - x[k - 1]);
    const d12 = (y[k + 1] - y[k]) / (x[k + 1] - x[k]);
    out.x.push(x[k]);
    out.y.push((-2 * (d12 - d01)) / (x[k + 1] - x[k - 1]) / sites);
  }
  return out;
}

/** dy/dx at the midpoints of an ascending grid. */
export function slope(x: ArrayLike<number>, y: ArrayLike<number>): Curve {
  const out: Curve = { x: [], y: [] };
  for (let k = 1; k < x.length; k++) {
    out.x.push((x[k - 1] + x[k]) / 2);
    out.y.push((y[k] - y[k - 1]) / (x[k] - x[k - 1]));
  }
  return out;
}

/** One line of a scan: points along one axis with the others held fixed. Arrays are parallel. */
export interface ScanLine {
  x: number[];
  /** Level crossings along the line (detectCrossings). */
  crossings?: Crossing[];
  /** Which quantity `gap` holds. */
  gapUses?: 'gap_above_ground' | 'gap';
  sites: number;
  groundEnergy: (number | null)[];
  gap?: (number | null)[];
  /** |<psi(x_{k-1})|psi(x_k)>| for each point k > 0 (entry 0 unused), or null where unknown. */
  overlapPrevious?: (number | null | undefined)[];
  stringWidth?: (number | null)[];
  /**
   * Ground-state degeneracy per point: a pair whose degeneracies differ is skipped, as the overlap
   * of ground spaces of different dimension jumps for reasons other than a change of state.
   */
  degeneracy?: (number | null)[];
}

/** Every indicator a line supports, with its peak. */
export function transitionIndicators(line: ScanLine): Indicator[] {
  // Sort once, carrying every column along.
  const order = line.x.map((_, k) => k).filter((k) => Number.isFinite(line.x[k]));
  order.sort((a, b) => line.x[a] - line.x[b]);
  const pick = <T>(values: T[] | undefined) => (values ? order.map((k) => values[k]) : undefined);
  const x = order.map((k) => line.x[k]);
  const crossings = line.crossings ?? [];
  const out: Indicator[] = [];
  // `support` gives the grid interval each sample of the curve is computed from; `extra` are samples
  // left out of the curve (pairs across a crossing) that still compete for the extremum.
  const add = (
    name: IndicatorName,
    label: string,
    uses: string,
    extremum: Indicator['extremum'],
    curve: Curve,
    support: (k: number) => [number, number],
    lowerBound?: number,
    extra: { value: number; crossing: Crossing }[] = [],
  ) => {
    if (curve.x.length === 0 && extra.length === 0) return;
    const peak = curve.x.length > 0 ? findPeak(curve.x, curve.y, extremum, { lowerBound }) : null;
    const { kind, crossing } = classify(curve, extremum, support, crossings, extra, peak);
    out.push({ name, label, uses, extremum, ...curve, peak, kind, ...(crossing ? { crossing } : {}) });
  };
  const pointSupport =
    (c: Curve) =>
    (k: number): [number, number] => [c.x[k], c.x[k]];

  const gap = pick(line.gap);
  // E1 >= E0: a gap is never negative.
  if (gap) {
    const uses = line.gapUses ?? 'gap';
    const curve = cleanCurve(x, gap);
    add(
      'gap',
      uses === 'gap' ? 'gap E1 - E0' : 'gap above the ground level',
      uses,
      'min',
      curve,
      pointSupport(curve),
      0,
    );
  }

  const overlaps = line.overlapPrevious;
  if (overlaps) {
    const degeneracy = pick(line.degeneracy);
    const pairs = [];
    const across: { value: number; crossing: Crossing }[] = [];
    // The overlap belongs to a point and its predecessor in scan order; after sorting, use it only
    // when that predecessor is still the neighbour on the grid (the scan ran the line in order).
    for (let s = 1; s < order.length; s++) {
      const k = order[s];
      const previous = order[s - 1];
      const neighbourInScan = k - 1 === previous || k + 1 === previous;
      // A crossing between them: the overlap measures a change of sector, not of one smooth state.
      const crossing = crossings.find((c) => c.between[0] === x[s - 1] && c.between[1] === x[s]);
      if (crossing) {
        const overlap = neighbourInScan ? (k - 1 === previous ? overlaps[k] : overlaps[previous]) : null;
        const F = typeof overlap === 'number' && Number.isFinite(overlap) ? Math.min(Math.abs(overlap), 1) : 0;
        across.push({ value: (-2 * Math.log(F)) / ((x[s] - x[s - 1]) ** 2 * line.sites), crossing });
        continue;
      }
      const degeneracyChanges = degeneracy && (degeneracy[s] ?? 1) !== (degeneracy[s - 1] ?? 1);
      if (!neighbourInScan || degeneracyChanges) continue;
      // overlapPrevious[k] pairs k with k-1; if the line ran backwards, k-1 is the next point up.
      const overlap = k - 1 === previous ? overlaps[k] : overlaps[previous];
      pairs.push({ from: x[s - 1], to: x[s], overlap });
    }
    const curve = fidelitySusceptibility(pairs, line.sites);
    const half = (k: number): [number, number] => {
      const gridIndex = x.findIndex((v) => v > curve.x[k]);
      return gridIndex > 0 ? [x[gridIndex - 1], x[gridIndex]] : [curve.x[k], curve.x[k]];
    };
    add('fidelity', 'fidelity susceptibility per site', 'overlap_previous', 'max', curve, half, undefined, across);
  }

  const energy = cleanCurve(x, pick(line.groundEnergy) ?? []);
  if (energy.x.length >= 3) {
    add('curvature', '-d2E0/dx2 per site', 'E0', 'max', negativeCurvature(energy.x, energy.y, line.sites), (k) => [
      energy.x[k],
      energy.x[k + 2],
    ]);
  }

  const width = pick(line.stringWidth);
  if (width) {
    const w = cleanCurve(x, width);
    if (w.x.length >= 2)
      add('width_slope', 'slope of the string width', 'string_width', 'max_abs', slope(w.x, w.y), (k) => [
        w.x[k],
        w.x[k + 1],
      ]);
  }
  return out;
}

/**
 * Whether an indicator's extremum is a crossing, the end of the scan or a smooth peak. The extremal
 * sample is a crossing's when the grid interval it is computed from reaches across that crossing
 * (for a sample at one grid point: the crossing lies next to it).
 */
function classify(
  curve: Curve,
  extremum: Indicator['extremum'],
  support: (k: number) => [number, number],
  crossings: Crossing[],
  extra: { value: number; crossing: Crossing }[],
  peak: Peak | null,
): { kind: Indicator['kind']; crossing?: Crossing } {
  const score = (v: number) => (extremum === 'min' ? -v : extremum === 'max_abs' ? Math.abs(v) : v);
  let best = -1;
  for (let k = 0; k < curve.y.length; k++) if (best < 0 || score(curve.y[k]) > score(curve.y[best])) best = k;
  const strongestExtra = extra.reduce<(typeof extra)[number] | null>(
    (b, e) => (!b || score(e.value) > score(b.value) ? e : b),
    null,
  );
  if (strongestExtra && (best < 0 || !(score(curve.y[best]) > score(strongestExtra.value))))
    return { kind: 'crossing', crossing: strongestExtra.crossing };
  if (best >= 0 && crossings.length > 0) {
    const [lo, hi] = support(best);
    const touches = (c: Crossing) =>
      lo === hi ? c.between[0] <= lo && lo <= c.between[1] : Math.max(lo, c.between[0]) < Math.min(hi, c.between[1]);
    const near = crossings.filter(touches);
    if (near.length > 0) {
      const at = peak?.position ?? curve.x[best];
      near.sort((a, b) => Math.abs(a.position - at) - Math.abs(b.position - at));
      return { kind: 'crossing', crossing: near[0] };
    }
  }
  return { kind: peak === null || peak.at_edge ? 'edge' : 'peak' };
}
