// One point of the data path: spec -> model -> basis -> operator -> solver -> observables -> record.
// `planPoint` sizes the problem without allocating it; `solvePoint` runs it.

import { basisDimension, buildBasis } from './basis.js';
import { buildModel, type Model } from './model.js';
import { buildOperator, operatorStorage } from './operator.js';
import { basisProbabilities, pinnedObservables, type Observables } from './observables.js';
import { itinerantObservables } from './observables/itinerant.js';
import { planFockOperator } from './operator/fock.js';
import { cutsFor, pinnedEntanglement } from './entanglement.js';
import { assertWithinMemory, defaultMemoryLimit, estimateSolveMemory, type MemoryEstimate } from './resources.js';
import { defaultKrylovSize, lowestEigenpairs, DEFAULT_DENSE_THRESHOLD, type EigenResult } from './solver.js';
import type { Spec } from './spec.js';

export interface PointPlan {
  model: Model;
  dimension: number;
  storage: 'on-the-fly' | 'stored';
  /** Nonzero matrix elements: stored ones, or what a stored matrix would hold for on-the-fly operators. */
  nonzeros: number | null;
  memory: MemoryEstimate;
}

export interface PointRecord {
  energies: number[];
  gap: number | null;
  observables: Observables;
  basis: { kind: string; dimension: number; sites: number; levels: number; operator: string; nonzeros: number };
  solver: {
    method: string;
    iterations: number;
    restarts: number;
    residuals: number[];
    converged: boolean;
    tolerance: number;
    degeneracy: number;
    seconds: number;
    memory_estimate_bytes: number;
  };
}

export interface SolveOptions {
  maxMemory?: number;
  /** Start vector for the eigensolver (warm start from a neighbouring point). */
  initial?: Float64Array;
  onProgress?: (info: { matvecs: number; restarts: number; worstResidual: number }) => void;
}

/** Sizes a point: dimension, storage and memory estimate, allocating nothing large. */
export function planPoint(spec: Spec): PointPlan {
  const model = buildModel(spec);
  const dimension = basisDimension(model);
  const states = Math.min(spec.solve.states, dimension);
  // Itinerant kinds store their matrix; its size is known in closed form before building.
  const fock = model.kind === 'pinned' ? null : planFockOperator(model, dimension);
  const memory = estimateSolveMemory({
    dim: dimension,
    isComplex: model.isComplex,
    operatorBytes: fock ? fock.bytes : dimension * 8, // the stored Fock matrix, or the pinned diagonal
    krylovVectors: spec.solve.krylov ?? defaultKrylovSize(states, dimension),
    states,
    denseThreshold: DEFAULT_DENSE_THRESHOLD,
  });
  return { model, dimension, storage: fock ? 'stored' : 'on-the-fly', nonzeros: fock ? fock.nonzeros : null, memory };
}

export interface SolvedPoint {
  record: PointRecord;
  /** Ground-state vectors (a degenerate ground space gives several), for warm starts and analysis. */
  groundStates: Float64Array[];
  eigen: EigenResult;
}

export function solvePoint(spec: Spec, options: SolveOptions = {}): SolvedPoint {
  const started = performance.now();
  const plan = planPoint(spec);
  assertWithinMemory(plan.memory, options.maxMemory ?? defaultMemoryLimit(), 'this problem');
  const basis = buildBasis(plan.model);
  const op = buildOperator(plan.model, basis);
  const states = Math.min(spec.solve.states, basis.dim);
  const eigen = lowestEigenpairs(op, {
    states,
    tolerance: spec.solve.tolerance,
    maxMatvecs: spec.solve.maxMatvecs ?? undefined,
    krylovSize: spec.solve.krylov ?? undefined,
    seed: spec.solve.seed,
    initial: options.initial,
    onProgress: options.onProgress,
    throwOnFailure: false,
  });
  const ground = eigen.vectors.slice(0, eigen.degeneracy);
  const observables =
    basis.kind === 'pinned'
      ? pinnedObservables(basis, basisProbabilities(ground, basis.dim, op.isComplex))
      : itinerantObservables(basis, ground, op.isComplex, plan.model.chainPeriodic);
  // Entanglement needs the state itself, so it is computed here; solve.entanglement keeps it cheap by default.
  const cuts = basis.kind === 'pinned' ? cutsFor(spec.solve.entanglement, basis.sites, basis.levels) : [];
  if (cuts.length > 0) observables.entanglement = pinnedEntanglement(ground, basis.sites, basis.levels, op.isComplex, cuts);
  const energies = Array.from(eigen.values);
  const record: PointRecord = {
    energies,
    gap: energies.length > 1 ? energies[1] - energies[0] : null,
    observables,
    basis: {
      kind: plan.model.kind,
      dimension: basis.dim,
      sites: plan.model.sites,
      levels: plan.model.levels,
      operator: operatorStorage(op),
      nonzeros: op.nonzeros(),
    },
    solver: {
      method: eigen.method,
      iterations: eigen.matvecs,
      restarts: eigen.restarts,
      residuals: Array.from(eigen.residuals),
      converged: eigen.converged,
      tolerance: spec.solve.tolerance,
      degeneracy: eigen.degeneracy,
      seconds: (performance.now() - started) / 1000,
      memory_estimate_bytes: plan.memory.totalBytes,
    },
  };
  return { record, groundStates: ground, eigen };
}
