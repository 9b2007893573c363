// Operators: the solvers see a Hermitian operator only through this interface.

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
