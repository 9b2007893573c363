// The connected start vectors (1 - P_0) O |psi_k> split over the symmetry sectors of the pinned
// Hamiltonian. H commutes with every sector projector P_s, so <phi| f(H) |phi> = sum_s
// <P_s phi| f(H) |P_s phi>: the spectrum of phi is the sum of the spectra of its sector parts, each
// computed with the sector's stored matrix (about 1/(L x charges) of the space) instead of the
// full operator. A probe at momentum q carries the ground state's k0 to k0 + q, a drive changes the
// charge by one, so only a few sectors receive weight; which ones is read off the vector itself,
// so no sign convention of O's quantum numbers is assumed.

import type { PinnedBasis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
import { planSectors, type SectorLabel, type SymmetryName } from '../symmetry/group.js';
import { SectorBasis, type OrbitMap } from '../symmetry/sectorBasis.js';
import { OrbitMaps } from '../symmetry/sectorSolve.js';

export interface SectorGroup {
  label: SectorLabel;
  sector: SectorBasis;
  /** One start vector per ground copy with weight here: sector coefficients (interleaved complex). */
  pieces: { copy: number; coefficients: Float64Array; weight: number }[];
}

/** The parts of every vector must add up to it within this fraction, else the split is not used. */
const COMPLETE = 1e-9;

/**
 * Every sector part of each of `vectors` (full-space, interleaved complex) whose squared norm is
 * above `zero`, grouped by sector; null when the parts do not add up to the vectors' norms (the
 * caller then works on the full space).
 */
export function splitIntoSectors(
  model: Model,
  basis: PinnedBasis,
  symmetries: SymmetryName[],
  vectors: Float64Array[],
  zero: number,
): { groups: SectorGroup[]; labels: SectorLabel[] } | null {
  const used = { translation: false, reflection: false, level_flip: false, charge: false } as Record<
    SymmetryName,
    boolean
  >;
  for (const name of symmetries) used[name] = true;
  // Every sector, the copies of a k, -k pair too: a vector's parts in k and -k differ.
  const labels = planSectors(used, model).flatMap((plan) => [plan.label, ...plan.copies]);
  // The charge of each full-space state is cheap to read: sectors of charges without weight are skipped.
  const chargeWeight = used.charge ? chargeWeights(basis, vectors) : null;
  // The same orbit maps as the sector solve: translations, reflection, level flip and point group.
  const maps = new OrbitMaps(model, basis, false);
  const mapFor = (label: SectorLabel): OrbitMap => maps.for(label);
  const norms = vectors.map((v) => {
    let n = 0;
    for (let k = 0; k < v.length; k++) n += v[k] * v[k];
    return n;
  });
  const found = vectors.map(() => 0);
  const groups: SectorGroup[] = [];
  for (const label of labels) {
    if (chargeWeight && label.charge !== null && (chargeWeight.get(label.charge) ?? 0) <= zero) continue;
    const sector = new SectorBasis(mapFor(label), label);
    if (sector.dim === 0) continue;
    const pieces: SectorGroup['pieces'] = [];
    vectors.forEach((v, copy) => {
      const coefficients = sector.project(v, true, true);
      let weight = 0;
      for (let k = 0; k < coefficients.length; k++) weight += coefficients[k] * coefficients[k];
      found[copy] += weight;
      if (weight > zero) pieces.push({ copy, coefficients, weight });
    });
    if (pieces.length > 0) groups.push({ label, sector, pieces });
  }
  const complete = norms.every((n, copy) => Math.abs(found[copy] - n) <= COMPLETE * Math.max(n, zero));
  return complete ? { groups, labels: groups.map((g) => g.label) } : null;
}

/** Squared norm of the vectors (summed) per charge sum_i n_i of the pinned basis states. */
function chargeWeights(basis: PinnedBasis, vectors: Float64Array[]): Map<number, number> {
  const N = basis.levels;
  const digits = new Int32Array(basis.sites);
  let charge = 0;
  const out = new Map<number, number>();
  for (let t = 0; t < basis.dim; t++) {
    let w = 0;
    for (const v of vectors) w += v[2 * t] * v[2 * t] + v[2 * t + 1] * v[2 * t + 1];
    if (w !== 0) out.set(charge, (out.get(charge) ?? 0) + w);
    // next state: site 0 fastest; the charge follows the digits that change
    for (let i = 0; i < basis.sites; i++) {
      if (++digits[i] < N) {
        charge++;
        break;
      }
      charge -= N - 1;
      digits[i] = 0;
    }
  }
  return out;
}
