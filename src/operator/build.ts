// Building the operator of a model on its basis: the pinned kernel or a stored Fock matrix.

import type { Basis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
import { CsrOperator } from './csr.js';
import { PinnedOperator } from './pinned.js';
import { buildFockOperator } from './fock.js';
import type { BuiltOperator, HermitianOperator } from './hermitian.js';
import type { VectorArena } from '../simd/arena.js';

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
