// Operators: the solvers see a Hermitian operator only through this interface.

import type { Basis } from './basis.js';
import type { Model } from './model.js';
import { CsrOperator } from './operator/csr.js';
import { PinnedOperator } from './operator/pinned.js';
import { buildFockOperator } from './operator/fock.js';

export { CsrBuilder, CsrOperator } from './operator/csr.js';
export { PinnedOperator } from './operator/pinned.js';
export { buildFockOperator, planFockOperator } from './operator/fock.js';

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

export function buildOperator(model: Model, basis: Basis): BuiltOperator {
  switch (basis.kind) {
    case 'pinned':
      return new PinnedOperator(model, basis);
    default:
      return buildFockOperator(model, basis);
  }
}
