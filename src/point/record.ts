// The record of one solved point, as written to a run folder: the same fields whichever way it was solved.

import type { Observables } from '../observables/pinned.js';
import type { Model } from '../model/model.js';
import { degeneracyWindow } from '../solver/eigensolver.js';
import type { SectorLabel, SymmetryName } from '../symmetry/group.js';
import type { SectorRun } from '../symmetry/sectorSolve.js';

export interface PointRecord {
  energies: number[];
  gap: number | null;
  /** Distance from the ground level to the next distinct level (copies within the degeneracy window are the ground level); null when no higher level was solved. */
  gap_above_ground?: number | null;
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
    /**
     * Whether every copy of the lowest level was found (false: more than the cap, or the solver
     * ran out of budget); the observables then average only the copies found.
     */
    degeneracy_complete: boolean;
    seconds: number;
    memory_estimate_bytes: number;
    symmetries?: SymmetryName[];
    sector_runs?: SectorRun[];
  };
  /** Quantum numbers of each state of `energies`, when solved in symmetry sectors. */
  sectors?: (SectorLabel & { k: number | number[] | null })[];
  /** With solve.observables = "each": every solved state with its own observables. */
  states?: StateRecord[];
}

/** One solved state and its observables (solve.observables = "each"). */
export interface StateRecord {
  /** Position in the solved spectrum (`energies`, then any further copies of the ground level). */
  index: number;
  energy: number;
  /** The sector it was found in; null when the whole space was solved as one. */
  sector: (SectorLabel & { k: number | number[] | null }) | null;
  /** Its own observables, or, for copies of a level found in one sector, their equal mixture's (no entanglement). */
  observables: Observables;
  /** The states (indices) whose equal mixture `observables` are, this one included; absent for a state on its own. */
  mixture_of?: number[];
  /** Present (true) when its level may have copies that were not found: `observables` then cover only the copies found. */
  level_incomplete?: true;
}

/** What the record keeps of an eigensolver run (full space or sector by sector). */
export interface SolveSummary {
  method: string;
  matvecs: number;
  restarts: number;
  residuals: number[];
  converged: boolean;
  degeneracy: number;
  degeneracyComplete: boolean;
}

export interface PointRecordParts {
  /** The `states` lowest energies. */
  energies: number[];
  observables: Observables;
  model: Model;
  dimension: number;
  operator: string;
  nonzeros: number;
  solve: SolveSummary;
  tolerance: number;
  /** performance.now() when the point's solve began. */
  started: number;
  memoryBytes: number;
  /** Symmetries used, their sector runs and each state's labels: set only by a sector-by-sector solve. */
  symmetries?: SymmetryName[];
  sectorRuns?: SectorRun[];
  sectors?: (SectorLabel & { k: number | number[] | null })[];
  states?: StateRecord[];
}

export function buildPointRecord(parts: PointRecordParts): PointRecord {
  const { energies, model, solve } = parts;
  return {
    energies,
    gap: energies.length > 1 ? energies[1] - energies[0] : null,
    gap_above_ground: gapAboveGround(energies, parts.tolerance),
    observables: parts.observables,
    basis: {
      kind: model.kind,
      dimension: parts.dimension,
      sites: model.sites,
      levels: model.levels,
      operator: parts.operator,
      nonzeros: parts.nonzeros,
    },
    solver: {
      method: solve.method,
      iterations: solve.matvecs,
      restarts: solve.restarts,
      residuals: solve.residuals,
      converged: solve.converged,
      tolerance: parts.tolerance,
      degeneracy: solve.degeneracy,
      degeneracy_complete: solve.degeneracyComplete,
      seconds: (performance.now() - parts.started) / 1000,
      memory_estimate_bytes: parts.memoryBytes,
      ...(parts.symmetries ? { symmetries: parts.symmetries } : {}),
      ...(parts.sectorRuns ? { sector_runs: parts.sectorRuns } : {}),
    },
    ...(parts.sectors ? { sectors: parts.sectors } : {}),
    ...(parts.states ? { states: parts.states } : {}),
  };
}

/**
 * E - E0 for the lowest solved energy E above the ground level's degeneracy window (the window the
 * solver counts copies of the ground level in), or null when every solved energy is a copy of E0.
 */
export function gapAboveGround(energies: ArrayLike<number>, tolerance: number): number | null {
  if (energies.length === 0) return null;
  const e0 = energies[0];
  const window = degeneracyWindow(e0, tolerance);
  for (let k = 1; k < energies.length; k++) if (energies[k] - e0 > window) return energies[k] - e0;
  return null;
}
