// Level crossings along a scanned line: a first-order change of the ground state of a finite system.
//
// With symmetry sectors each point records every sector's lowest energy (solver.sector_runs). Between
// two neighbouring grid points each sector's lowest level is taken as linear in the parameter, and the
// lower envelope of those lines is followed from the left point to the right one: every change of the
// lowest sector is a crossing, at the position where the two sectors' lines meet. Within a sector a
// level is exactly linear in a parameter that multiplies a conserved quantity (a detuning with the
// level charge conserved), so there the position is exact.
//
// Without sector energies (no symmetries used, or an itinerant kind) a crossing is detected from the
// overlap of neighbouring ground spaces falling below CROSSING_OVERLAP, and placed at the midpoint.

import { degeneracyWindow } from '../solver/eigensolver.js';
import { momentumText, pointGroupText, type SectorLabel } from '../symmetry/group.js';

/**
 * Below this overlap |<psi(x)|psi(x + delta)>| of neighbouring ground spaces the ground state is
 * taken to have changed discontinuously between them. A smooth ground state on a grid fine enough
 * to resolve a peak keeps F close to 1; 1e-3 is -2 ln F = 13.8, far above what a resolved peak gives.
 */
export const CROSSING_OVERLAP = 1e-3;

export interface Crossing {
  /** Where the two sectors' lowest levels meet (linear between the bracketing grid points), or the midpoint. */
  position: number;
  /** The neighbouring grid points it lies between. */
  between: [number, number];
  /** The ground sector before (lower parameter) and after the crossing; null without sector data. */
  from: SectorLabel | null;
  to: SectorLabel | null;
  /** True when the position comes from the sectors' energies; false: the midpoint of `between`. */
  interpolated: boolean;
  /** 'sectors': the lowest sector changes; 'overlap': the overlap of neighbouring ground spaces fell below CROSSING_OVERLAP. */
  detected_by: 'sectors' | 'overlap';
  /** The overlap of the ground spaces at the two grid points, when the scan recorded it. */
  overlap: number | null;
}

/** One sector's lowest energy at one point (a SectorRun's fields this module needs). */
export interface SectorLowest {
  label: SectorLabel;
  copies?: SectorLabel[];
  lowest: number;
}

/** What crossing detection needs of one point of a line. */
export interface CrossingPoint {
  x: number;
  /** Every sector solved at this point, or null when the point was not solved in sectors. */
  sectors: SectorLowest[] | null;
  /** The solver tolerance (sets the window within which two levels count as one). */
  tolerance: number;
  /** Overlap of this point's ground space with the previous point's on the grid, or null. */
  overlapPrevious: number | null;
}

export function sectorKey(label: SectorLabel): string {
  return (
    `${label.charge ?? '-'}|${momentumText(label.momentum)}|${label.parity ?? '-'}|${label.level_flip ?? '-'}` +
    (label.point_group ? `|${pointGroupText(label.point_group)}` : '')
  );
}

/** Sector label text for tables: `q=2 m=3 P=+ F=-` (only the labels in use). */
export function sectorText(label: SectorLabel | null): string {
  if (!label) return '?';
  const parts: string[] = [];
  if (label.charge !== null) parts.push(`q=${label.charge}`);
  if (label.momentum !== null) parts.push(`m=${momentumText(label.momentum)}`);
  if (label.parity !== null) parts.push(`P=${label.parity > 0 ? '+' : '-'}`);
  if (label.level_flip !== null) parts.push(`F=${label.level_flip > 0 ? '+' : '-'}`);
  if (label.point_group) parts.push(`G=${pointGroupText(label.point_group)}`);
  return parts.join(' ') || 'all';
}

/**
 * Crossings between neighbouring points of an ascending line. Points are consecutive on the grid;
 * `overlapPrevious` of point k belongs to the pair (k-1, k).
 */
export function detectCrossings(points: CrossingPoint[]): Crossing[] {
  const out: Crossing[] = [];
  for (let k = 1; k < points.length; k++) {
    const a = points[k - 1];
    const b = points[k];
    const overlap =
      typeof b.overlapPrevious === 'number' && Number.isFinite(b.overlapPrevious) ? b.overlapPrevious : null;
    const found = a.sectors && b.sectors ? envelopeCrossings(a, b) : [];
    for (const c of found) out.push({ ...c, overlap });
    if (found.length === 0 && overlap !== null && overlap < CROSSING_OVERLAP) {
      const ground = (p: CrossingPoint) => (p.sectors ? lowestOf(p.sectors) : null);
      out.push({
        position: (a.x + b.x) / 2,
        between: [a.x, b.x],
        from: ground(a)?.label ?? null,
        to: ground(b)?.label ?? null,
        interpolated: false,
        detected_by: 'overlap',
        overlap,
      });
    }
  }
  return out;
}

/** The sector with the lowest energy. */
function lowestOf(sectors: SectorLowest[]): SectorLowest | null {
  let best: SectorLowest | null = null;
  for (const s of sectors) if (Number.isFinite(s.lowest) && (!best || s.lowest < best.lowest)) best = s;
  return best;
}

/** Changes of the lowest sector between two points, each sector's lowest level linear in between. */
function envelopeCrossings(a: CrossingPoint, b: CrossingPoint): Omit<Crossing, 'overlap'>[] {
  const right = new Map(b.sectors!.map((s) => [sectorKey(s.label), s]));
  // Lines over t in [0, 1] for the sectors solved at both points.
  const lines: { label: SectorLabel; e0: number; slope: number }[] = [];
  for (const s of a.sectors!) {
    const r = right.get(sectorKey(s.label));
    if (r && Number.isFinite(s.lowest) && Number.isFinite(r.lowest))
      lines.push({ label: s.label, e0: s.lowest, slope: r.lowest - s.lowest });
  }
  if (lines.length < 2) return [];
  const window = Math.max(
    degeneracyWindow(lines[0].e0, a.tolerance),
    degeneracyWindow(lines[0].e0 + lines[0].slope, b.tolerance),
  );
  // Start on the lowest line at t = 0; among level ones, the one that stays lowest just after it.
  let current = lines[0];
  for (const l of lines) {
    if (l.e0 < current.e0 - window || (Math.abs(l.e0 - current.e0) <= window && l.slope < current.slope)) current = l;
  }
  const out: Omit<Crossing, 'overlap'>[] = [];
  let t = 0;
  for (;;) {
    let next: { line: (typeof lines)[number]; t: number } | null = null;
    for (const l of lines) {
      if (l === current) continue;
      const d0 = l.e0 - current.e0;
      const dSlope = l.slope - current.slope;
      // Level with the current line over the whole interval: a copy of the same level, not a crossing.
      if (Math.abs(d0) <= window && Math.abs(d0 + dSlope) <= window) continue;
      if (!(dSlope < 0)) continue;
      const meet = -d0 / dSlope;
      // A meeting at the left point itself was settled by the choice of the starting line.
      if (!(meet > t + 1e-12) || meet > 1 + 1e-12) continue;
      if (!next || meet < next.t - 1e-15 || (Math.abs(meet - next.t) <= 1e-15 && l.slope < next.line.slope))
        next = { line: l, t: meet };
    }
    if (!next) break;
    const tt = Math.min(next.t, 1);
    out.push({
      position: a.x + tt * (b.x - a.x),
      between: [a.x, b.x],
      from: current.label,
      to: next.line.label,
      interpolated: true,
      detected_by: 'sectors',
    });
    current = next.line;
    t = next.t;
  }
  return out;
}
