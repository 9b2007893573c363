// The one place a spec's [solve] section becomes eigensolver options, for every solve path
// (full space, symmetry sectors, the ground states of time evolution).

import type { Spec } from '../spec/spec.js';

export interface SolveSettings {
  tolerance: number;
  maxMatvecs?: number;
  krylovSize?: number;
  seed: number;
}

export function solveSettings(solve: Spec['solve']): SolveSettings {
  return {
    tolerance: solve.tolerance,
    maxMatvecs: solve.maxMatvecs ?? undefined,
    krylovSize: solve.krylov ?? undefined,
    seed: solve.seed,
  };
}
