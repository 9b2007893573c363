// Basis: the many-body states a model's operator acts on, and how to index them.

import { ResourceError } from '../errors/errors.js';
import type { Model } from '../model/model.js';
import { FockBasis, fockDimension } from './fock.js';

export { FockBasis, FockCursor, fockDimension } from './fock.js';

/**
 * Pinned molecules, one per site: a state is the level n_i of each site, indexed in mixed radix
 * with site 0 fastest, index = sum_i n_i N^i. No table is stored: digits are arithmetic.
 */
export interface PinnedBasis {
  readonly kind: 'pinned';
  readonly dim: number;
  readonly sites: number;
  readonly levels: number;
  /** strides[i] = N^i. */
  readonly strides: Int32Array;
}

/** Itinerant kinds (hardcore, boson, fermion) use the fixed-number Fock basis of src/basis/fock.ts. */
export type Basis = PinnedBasis | FockBasis;

/** Largest dimension any basis may have: typed arrays are indexed by 32-bit integers here. */
export const MAX_DIMENSION = 2 ** 31 - 1;

export function pinnedDimension(sites: number, levels: number): number {
  return Math.pow(levels, sites);
}

/** Dimension of the model's basis without building it (for `check` and memory estimates). */
export function basisDimension(model: Model): number {
  if (model.kind !== 'pinned')
    return fockDimension(model.kind, model.sites, model.levels, model.particleNumber, model.maxPerSite);
  return pinnedDimension(model.sites, model.levels);
}

export function buildBasis(model: Model): Basis {
  const dim = basisDimension(model);
  if (dim > MAX_DIMENSION) {
    throw new ResourceError(
      `basis dimension ${dim.toExponential(3)} exceeds the largest supported dimension ${MAX_DIMENSION}`,
    );
  }
  if (model.kind !== 'pinned')
    return new FockBasis(model.kind, model.sites, model.levels, model.particleNumber, model.maxPerSite);
  const strides = new Int32Array(model.sites);
  let s = 1;
  for (let i = 0; i < model.sites; i++) {
    strides[i] = s;
    s *= model.levels;
  }
  return { kind: 'pinned', dim, sites: model.sites, levels: model.levels, strides };
}

/** Writes the level of every site of pinned state `index` into `out` (length sites). */
export function pinnedDigits(basis: PinnedBasis, index: number, out: Int32Array): void {
  const N = basis.levels;
  let r = index;
  for (let i = 0; i < basis.sites; i++) {
    const q = Math.floor(r / N);
    out[i] = r - q * N;
    r = q;
  }
}

/** Index of the pinned state with the given level per site. */
export function pinnedIndex(basis: PinnedBasis, levelsPerSite: ArrayLike<number>): number {
  let index = 0;
  for (let i = 0; i < basis.sites; i++) index += levelsPerSite[i] * basis.strides[i];
  return index;
}
