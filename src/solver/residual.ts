// The eigenpair residual H v - e v, measured the same way by every solve path.

import type { HermitianOperator } from '../operator/hermitian.js';
import { plainKernels, type VectorKernels } from '../linalg/vectorKernels.js';

/** Writes H v - e v into `work` (one product). */
export function residualVector(
  op: HermitianOperator,
  v: Float64Array,
  e: number,
  work: Float64Array,
  kernels: VectorKernels = plainKernels,
): void {
  op.apply(v, work);
  kernels.axpy(work, v, -e);
}

/** ||H v - e v|| (one product; `work` is overwritten). */
export function residualNorm(
  op: HermitianOperator,
  v: Float64Array,
  e: number,
  work: Float64Array = new Float64Array(v.length),
  kernels: VectorKernels = plainKernels,
): number {
  residualVector(op, v, e, work, kernels);
  return kernels.norm2(work);
}
