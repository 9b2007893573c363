// Operators: the solvers see a Hermitian operator only through this interface.

import type { Basis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
import { CsrOperator } from './csr.js';
import { PinnedOperator } from './pinned.js';
import { buildFockOperator } from './fock.js';

import type { VectorArena } from '../simd/arena.js';
export { CsrBuilder, CsrOperator } from './csr.js';
export { PinnedOperator } from './pinned.js';
export { buildFockOperator, planFockOperator } from './fock.js';

/**
 * A Hermitian linear operator known by its dimension and matrix-vector product.
 * Vectors are Float64Array of length `dim` (real operator) or `2*dim` (complex operator,
 * interleaved re,im). `apply` writes y = H x, overwriting y; x and y never alias.
 */
export interface HermitianOperator {
  readonly dim: number;
  readonly isComplex: boolean;
  apply(x: Float64Array, y: Float64Array): void;
}

/** The operator of a model on its basis, with what `check` reports about its storage. */
export interface BuiltOperator extends HermitianOperator {
  nonzeros(): number;
}

export function operatorStorage(op: HermitianOperator): 'on-the-fly' | 'stored' {
  return op instanceof CsrOperator ? 'stored' : 'on-the-fly';
}

/** `arena`: where a stored matrix is built (see buildFockOperator); the pinned kernel stores none. */
export function buildOperator(model: Model, basis: Basis, arena?: VectorArena | null): BuiltOperator {
  switch (basis.kind) {
    case 'pinned':
      return new PinnedOperator(model, basis);
    default:
      return buildFockOperator(model, basis, arena);
  }
}
