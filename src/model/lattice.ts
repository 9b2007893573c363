// Geometry of the sites (issue 19): positions, the minimum image on periodic directions, nearest
// bonds, and dipolar pair couplings V_ij = V (1 - 3 cos^2 theta_ij) / r_ij^3 with theta_ij the angle
// between the separation and the quantization axis.
//
// Site order: row-major, x fastest (site = x + Lx (y + Ly z)); custom sites in the order given; the
// model's sites are the lattice's without the vacancies, renumbered in that order. A plain [chain] is
// the lattice shape "chain" with the field along z, perpendicular to it: its couplings are exactly
// (bit for bit) those of the chain formula |i - j|, shorter way round on a ring.
//
// Minimum image: on periodic directions a pair's separation is the shortest among d + sum_d n_d B_d,
// n_d in {-1, 0, 1}, B_d the box vectors. Images tied at the shortest distance (the pair half a box
// apart) share the pair: its angular factor is the average of theirs.

import type { LatticeSpec } from '../spec/lattice.js';
import { isChainLattice, periodicBoxes, primitiveVectors } from '../spec/lattice.js';

/** Pairs (i, j), i < j, with a coupling value; typed arrays so kernels can loop over them. */
export interface PairList {
  readonly count: number;
  readonly i: Int32Array;
  readonly j: Int32Array;
  readonly value: Float64Array;
}

export interface Geometry {
  readonly shape: LatticeSpec['shape'];
  /** A chain without vacancies: translations, reflections, structure factors and cuts by position apply. */
  readonly isChain: boolean;
  /** A periodic chain (a ring). */
  readonly isRing: boolean;
  readonly sites: number;
  /** x, y, z per model site. */
  readonly positions: Float64Array;
  /** Each model site's index in the lattice (vacancies included in the numbering). */
  readonly latticeIndex: Int32Array;
  /** Box vectors of the periodic directions. */
  readonly boxes: readonly (readonly number[])[];
  /** Periodic lattice directions (not custom): the direction, its site count and one lattice step (the translation by one site). */
  readonly periodicDirections: readonly { direction: number; size: number; step: readonly number[] }[];
  /** Unit vector of the quantization axis. */
  readonly field: readonly [number, number, number];
  /** Custom hopping bonds in model indices (i < j), or null for the nearest neighbours. */
  readonly customBonds: readonly (readonly [number, number])[] | null;
  /** Per pair p = pairIndex(i, j): minimum-image distance, averaged angular factor, and whether the image wraps. */
  readonly distance: Float64Array;
  readonly angular: Float64Array;
  readonly wraps: Uint8Array;
  /** Shortest pair distance (Infinity with one site). */
  readonly shortest: number;
}

/** Separations within this relative difference are the same distance (ties of images, nearest shells). */
const SAME_DISTANCE = 1e-9;

/** Index of pair (i, j), i < j, in the row-major upper triangle. */
export function pairIndex(i: number, j: number, sites: number): number {
  return i * sites - (i * (i + 1)) / 2 + (j - i - 1);
}

/** A [chain] of `sites` as a geometry: shape "chain", field along z. */
export function chainGeometry(sites: number, periodic: boolean): Geometry {
  return latticeGeometry({
    shape: 'chain',
    size: [sites],
    boundary: [periodic ? 'periodic' : 'open'],
    spacing: [1],
    positions: null,
    bonds: null,
    field: [0, 0, 1],
    vacancies: [],
    latticeSites: sites,
  });
}

export function latticeGeometry(lattice: LatticeSpec): Geometry {
  const all: number[][] = [];
  if (lattice.shape === 'custom') {
    for (const p of lattice.positions as number[][]) all.push(p.map((x, k) => x * lattice.spacing[k]));
  } else {
    const vectors = primitiveVectors(lattice.shape, lattice.size.length);
    const [Lx, Ly = 1, Lz = 1] = lattice.size;
    for (let z = 0; z < Lz; z++)
      for (let y = 0; y < Ly; y++)
        for (let x = 0; x < Lx; x++) {
          const n = [x, y, z];
          const p = [0, 0, 0];
          for (let d = 0; d < lattice.size.length; d++)
            for (let c = 0; c < 3; c++) p[c] += n[d] * lattice.spacing[d] * vectors[d][c];
          all.push(p);
        }
  }
  const vacant = new Set(lattice.vacancies);
  const kept: number[] = [];
  for (let s = 0; s < all.length; s++) if (!vacant.has(s)) kept.push(s);
  const L = kept.length;
  const positions = new Float64Array(3 * L);
  kept.forEach((s, k) => positions.set(all[s], 3 * k));
  const modelIndex = new Map(kept.map((s, k) => [s, k]));
  const customBonds =
    lattice.bonds === null
      ? null
      : lattice.bonds
          .filter(([a, b]) => modelIndex.has(a) && modelIndex.has(b))
          .map(([a, b]) => [modelIndex.get(a) as number, modelIndex.get(b) as number] as const);

  const boxes = periodicBoxes(lattice);
  const periodicDirections: { direction: number; size: number; step: number[] }[] = [];
  if (lattice.shape !== 'custom') {
    const vectors = primitiveVectors(lattice.shape, lattice.size.length);
    lattice.size.forEach((size, d) => {
      if (lattice.boundary[d] === 'periodic')
        periodicDirections.push({ direction: d, size, step: vectors[d].map((x) => x * lattice.spacing[d]) });
    });
  }
  const images = imageShifts(boxes);
  const field = lattice.field;
  const pairs = (L * (L - 1)) / 2;
  const distance = new Float64Array(pairs);
  const angular = new Float64Array(pairs);
  const wraps = new Uint8Array(pairs);
  let shortest = Infinity;
  const r2s = new Float64Array(images.length);
  for (let i = 0; i < L; i++) {
    for (let j = i + 1; j < L; j++) {
      const dx = positions[3 * j] - positions[3 * i];
      const dy = positions[3 * j + 1] - positions[3 * i + 1];
      const dz = positions[3 * j + 2] - positions[3 * i + 2];
      let best = Infinity;
      for (let m = 0; m < images.length; m++) {
        const s = images[m];
        const x = dx + s[0];
        const y = dy + s[1];
        const z = dz + s[2];
        r2s[m] = x * x + y * y + z * z;
        if (r2s[m] < best) best = r2s[m];
      }
      let sum = 0;
      let count = 0;
      let direct = false;
      for (let m = 0; m < images.length; m++) {
        if (r2s[m] - best > SAME_DISTANCE * best) continue;
        const s = images[m];
        const x = dx + s[0];
        const y = dy + s[1];
        const z = dz + s[2];
        const r = Math.sqrt(r2s[m]);
        const c = (x * field[0] + y * field[1] + z * field[2]) / r;
        sum += 1 - 3 * c * c;
        count++;
        if (m === 0) direct = true;
      }
      const p = pairIndex(i, j, L);
      distance[p] = Math.sqrt(best);
      angular[p] = sum / count;
      wraps[p] = direct ? 0 : 1;
      if (distance[p] < shortest) shortest = distance[p];
    }
  }
  const isChain = isChainLattice(lattice);
  return {
    shape: lattice.shape,
    isChain,
    isRing: isChain && lattice.boundary[0] === 'periodic',
    sites: L,
    positions,
    latticeIndex: Int32Array.from(kept),
    boxes,
    periodicDirections,
    field,
    customBonds,
    distance,
    angular,
    wraps,
    shortest,
  };
}

/** Every shift sum_d n_d B_d, n_d in {-1, 0, 1}; the zero shift first. */
function imageShifts(boxes: number[][]): number[][] {
  let shifts: number[][] = [[0, 0, 0]];
  for (const box of boxes) {
    const next: number[][] = [];
    for (const s of shifts) for (const n of [0, -1, 1]) next.push(s.map((x, c) => x + n * box[c]));
    shifts = next;
  }
  return shifts;
}

function isShortest(geometry: Geometry, p: number): boolean {
  return geometry.distance[p] - geometry.shortest <= SAME_DISTANCE * geometry.shortest;
}

/**
 * Pair couplings strength (1 - 3 cos^2 theta) / r^3: "nearest" for the pairs at the shortest
 * separation only, "dipolar" for every pair with r <= cutoff. Pairs whose coupling is exactly 0 are
 * left out. Order: i ascending, then j.
 */
export function geometryCouplings(
  geometry: Geometry,
  strength: number,
  range: 'nearest' | 'dipolar',
  cutoff: number,
): PairList {
  const is: number[] = [];
  const js: number[] = [];
  const vs: number[] = [];
  const L = geometry.sites;
  if (strength !== 0) {
    for (let i = 0; i < L; i++) {
      for (let j = i + 1; j < L; j++) {
        const p = pairIndex(i, j, L);
        const r = geometry.distance[p];
        let f = 0;
        if (range === 'nearest' ? isShortest(geometry, p) : r <= cutoff) f = geometry.angular[p] / (r * r * r);
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

/**
 * Hopping bonds (i < j) with amplitude t: the custom ones in their order, else the pairs at the
 * shortest separation, direct ones first and then those that wrap round a periodic box (so a ring
 * lists its bond (0, L-1) last, as the chain always has).
 */
export function geometryBonds(geometry: Geometry, amplitude: number): PairList {
  const is: number[] = [];
  const js: number[] = [];
  if (amplitude !== 0) {
    if (geometry.customBonds) {
      for (const [a, b] of geometry.customBonds) {
        is.push(a);
        js.push(b);
      }
    } else {
      const L = geometry.sites;
      for (const wrapping of [0, 1])
        for (let i = 0; i < L; i++)
          for (let j = i + 1; j < L; j++) {
            const p = pairIndex(i, j, L);
            if (geometry.wraps[p] === wrapping && isShortest(geometry, p)) {
              is.push(i);
              js.push(j);
            }
          }
    }
  }
  return {
    count: is.length,
    i: Int32Array.from(is),
    j: Int32Array.from(js),
    value: new Float64Array(is.length).fill(amplitude),
  };
}
