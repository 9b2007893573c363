// The exact thermal method: every eigenpair of every symmetry sector (dense), each sector weighted
// by the sectors that share its spectrum (k and -k), and the Boltzmann mixture of all of them.
//
// Pinned observables are diagonal in the level basis, so the thermal state's observables follow
// from the thermal probability of each basis state, p_T(s) = sum_k w_k e^{-E_k/T} |psi_k(s)|^2 / Z,
// handed to the ground state's code (src/observables/pinned.ts), which takes every nonlinear
// quantity (spread, correlations) from the mixture's moments, as for a degenerate ground level.
// Sector states spread their weight evenly over their orbit (SectorBasis.accumulateProbabilities).
// Itinerant kinds (one block, no sectors) hand the weighted eigenvectors to their observables.

import type { Basis, PinnedBasis } from '../basis/basis.js';
import type { FockBasis } from '../basis/fock.js';
import type { Model } from '../model/model.js';
import { buildOperator } from '../operator/build.js';
import { denseEigen } from '../solver/eigensolver.js';
import { buildSectorOperator } from '../symmetry/sectorOperator.js';
import { SectorBasis } from '../symmetry/sectorBasis.js';
import type { SectorPlan } from '../symmetry/group.js';
import { OrbitMaps } from '../symmetry/sectorSolve.js';
import { pinnedObservables, type CorrelationRequest, type Observables } from '../observables/pinned.js';
import { itinerantObservables } from '../observables/itinerant.js';
import { boltzmannFactors, thermodynamicsOf, type Thermodynamics } from './thermodynamics.js';

/** One diagonalized block: a sector (with its copies' weight) or the whole space. */
interface Block {
  weight: number;
  values: Float64Array;
  /** Eigenvectors (real, or interleaved complex), one per value. */
  vectors: Float64Array[];
  isComplex: boolean;
  sector: SectorBasis | null;
}

export interface ThermalState extends Thermodynamics {
  observables: Observables;
}

/** Every eigenpair of the model, block by block. `sectors` null: the whole space as one block. */
export function diagonalizeBlocks(model: Model, basis: Basis, sectors: SectorPlan[] | null): Block[] {
  if (sectors === null || basis.kind !== 'pinned') {
    const op = buildOperator(model, basis, null);
    const { values, vectors } = denseEigen(op);
    return [{ weight: 1, values, vectors, isComplex: op.isComplex, sector: null }];
  }
  // The sector solve's orbit maps: translations, reflection, level flip and point group.
  const maps = new OrbitMaps(model, basis, false);
  return sectors.map((plan) => {
    const orbits = maps.for(plan.label);
    const sector = new SectorBasis(orbits, plan.label);
    if (sector.dim === 0) return { weight: 0, values: new Float64Array(0), vectors: [], isComplex: false, sector };
    const op = buildSectorOperator(model, basis, sector, null);
    const { values, vectors } = denseEigen(op);
    return { weight: 1 + plan.copies.length, values, vectors, isComplex: op.isComplex, sector };
  });
}

/** Lowest energy over the blocks. */
export function lowestEnergy(blocks: Block[]): number {
  let e0 = Infinity;
  for (const b of blocks) if (b.values.length > 0 && b.weight > 0) e0 = Math.min(e0, b.values[0]);
  return e0;
}

/** Every level with its weight, for the thermodynamics (and for root finding on S(T)). */
export function levelsOf(blocks: Block[]): { energies: Float64Array; weights: Float64Array } {
  const n = blocks.reduce((s, b) => s + b.values.length, 0);
  const energies = new Float64Array(n);
  const weights = new Float64Array(n);
  let at = 0;
  for (const b of blocks) {
    energies.set(b.values, at);
    weights.fill(b.weight, at, at + b.values.length);
    at += b.values.length;
  }
  return { energies, weights };
}

/** The thermal state at temperature T (k_B T in model units). */
export function exactThermalState(
  blocks: Block[],
  basis: Basis,
  temperature: number,
  correlations: CorrelationRequest,
  periodic: boolean,
): ThermalState {
  const e0 = lowestEnergy(blocks);
  const { energies, weights } = levelsOf(blocks);
  const factors = new Float64Array(energies.length);
  const z = boltzmannFactors(energies, weights, e0, temperature, factors);
  const thermo = thermodynamicsOf(energies, factors, z, e0, temperature);
  let observables: Observables;
  if (basis.kind === 'pinned') {
    observables = pinnedObservables(basis, pinnedProbabilities(blocks, basis, factors, z), correlations);
  } else {
    observables = itinerantMixture(blocks[0], basis, factors, z, periodic, correlations);
  }
  return { ...thermo, observables };
}

/** p_T(s) over the full pinned basis; `factors` in the order of levelsOf. */
function pinnedProbabilities(blocks: Block[], basis: PinnedBasis, factors: Float64Array, z: number): Float64Array {
  const p = new Float64Array(basis.dim);
  let at = 0;
  for (const b of blocks) {
    const count = b.values.length;
    if (count === 0) continue;
    const d = b.sector ? b.sector.dim : basis.dim;
    // weights per block state: sum_k x_k |c_k(a)|^2 / z
    const perState = new Float64Array(d);
    for (let k = 0; k < count; k++) {
      const x = factors[at + k] / z;
      if (x === 0) continue;
      const c = b.vectors[k];
      if (b.isComplex)
        for (let a = 0; a < d; a++) perState[a] += x * (c[2 * a] * c[2 * a] + c[2 * a + 1] * c[2 * a + 1]);
      else for (let a = 0; a < d; a++) perState[a] += x * c[a] * c[a];
    }
    at += count;
    if (b.sector) accumulateSectorWeights(b.sector, perState, p);
    else for (let s = 0; s < d; s++) p[s] += perState[s];
  }
  return p;
}

/** Adds sector-state weights W(a) to the full basis: W(a) n_a / |G| on every state of a's orbit. */
function accumulateSectorWeights(sector: SectorBasis, perState: Float64Array, out: Float64Array): void {
  const { repOf } = sector.orbits;
  const G = sector.orbits.order;
  const perRep = new Float64Array(sector.orbits.representatives);
  for (let a = 0; a < sector.dim; a++) perRep[sector.repIndex[a]] = (perState[a] * sector.norm[a]) / G;
  for (let t = 0; t < out.length; t++) {
    const w = perRep[repOf[t]];
    if (w !== 0) out[t] += w;
  }
}

/**
 * Itinerant observables of the mixture: itinerantObservables averages |psi|^2-linear quantities
 * over the states it is given with weight 1/count, so each eigenvector enters scaled by
 * sqrt(count x_k / z). States whose weight is below 1e-18 of the total are left out (their
 * contribution is below double rounding of the sums).
 */
function itinerantMixture(
  block: Block,
  basis: FockBasis,
  factors: Float64Array,
  z: number,
  periodic: boolean,
  correlations: CorrelationRequest,
): Observables {
  const kept: number[] = [];
  for (let k = 0; k < block.values.length; k++) if (factors[k] / z > 1e-18) kept.push(k);
  const scaled = kept.map((k) => {
    const v = block.vectors[k].slice();
    const f = Math.sqrt((kept.length * factors[k]) / z);
    for (let i = 0; i < v.length; i++) v[i] *= f;
    return v;
  });
  return itinerantObservables(basis, scaled, block.isComplex, periodic, correlations);
}
