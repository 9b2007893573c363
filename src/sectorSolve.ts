// Solving a pinned chain sector by sector: the lowest `states` over all sectors (or the sectors the
// user names), each labelled with its quantum numbers, and the ground-space probabilities for the
// observables, without ever forming a full-space vector unless asked.

import type { PinnedBasis } from './basis.js';
import { OrbitMap, SectorBasis, type GroupUse } from './basis/sectors.js';
import { SpecError } from './errors.js';
import type { Model } from './model.js';
import { buildSectorOperator } from './operator/sector.js';
import { withThreads } from './parallel.js';
import { VectorArena } from './simd.js';
import { degeneracyWindow, denseThresholdFor, lowestEigenpairs, type EigenOptions } from './solver.js';
import { IndexActions, planSectors, type SectorLabel, type SectorSelection, type SymmetryName } from './symmetry.js';

export interface SectorRun {
  label: SectorLabel;
  dimension: number;
  method: 'dense' | 'lanczos';
  iterations: number;
  lowest: number;
  /** True when only the sector's lowest state was needed to show it adds nothing below the answer. */
  screened: boolean;
  copies: SectorLabel[];
}

export interface SectorSolution {
  energies: number[];
  labels: SectorLabel[];
  residuals: number[];
  converged: boolean;
  matvecs: number;
  restarts: number;
  degeneracy: number;
  runs: SectorRun[];
  /** |psi(s)|^2 averaged over the degenerate ground space, on the full basis. */
  groundProbabilities: Float64Array;
  /** Full-space ground states (interleaved complex), only when `expandGround` was asked. */
  groundStates: Float64Array[];
  method: 'dense' | 'lanczos';
}

export interface SectorSolveOptions {
  states: number;
  tolerance: number;
  maxMatvecs?: number;
  krylovSize?: number;
  seed?: number;
  selection?: SectorSelection;
  /** Full-space start vector, projected into each sector (warm start). */
  initial?: Float64Array;
  initialComplex?: boolean;
  expandGround?: boolean;
  /** Threads for one product of a sector whose stored matrix has `work` nonzeros (default 1). */
  threadsFor?: (work: number) => number;
  onProgress?: EigenOptions['onProgress'];
}

interface Found {
  energy: number;
  label: SectorLabel;
  residual: number;
  sector: SectorBasis | null;
  vector: Float64Array | null;
  complex: boolean;
}

function groupFor(label: SectorLabel): GroupUse {
  return { translation: label.momentum !== null, reflection: label.parity !== null, levelFlip: label.level_flip !== null };
}

/** Charges near the middle first, then momenta 0 and pi, then the rest: ground states usually live there. */
function sectorOrder(model: Model) {
  const middle = (model.sites * (model.levels - 1)) / 2;
  return (a: { label: SectorLabel }, b: { label: SectorLabel }) => {
    const qa = a.label.charge === null ? 0 : Math.abs(a.label.charge - middle);
    const qb = b.label.charge === null ? 0 : Math.abs(b.label.charge - middle);
    if (qa !== qb) return qa - qb;
    // Momenta 0 and pi first: the low states of these chains sit there most often (Marshall-type
    // sign structures), and the sooner the lowest `states` are known, the sooner the other
    // sectors are screened out after a short partial solve. The order never changes the result.
    const edge = (m: number | null) => (m === null || m === 0 || 2 * m === model.sites ? 0 : 1);
    const ea = edge(a.label.momentum);
    const eb = edge(b.label.momentum);
    if (ea !== eb) return ea - eb;
    return (a.label.momentum ?? 0) - (b.label.momentum ?? 0);
  };
}

export function solveInSectors(
  model: Model,
  basis: PinnedBasis,
  use: Record<SymmetryName, boolean>,
  opts: SectorSolveOptions,
): SectorSolution {
  const selection = opts.selection ?? {};
  (selection.momentum ?? []).forEach((m, i) => {
    if (!use.translation) throw new SpecError('solve.sector.momentum', 'this model has no translation symmetry');
    if (m >= model.sites) throw new SpecError(`solve.sector.momentum[${i}]`, `momentum index must be below ${model.sites}, got ${m}`);
  });
  if (selection.parity && !use.reflection) throw new SpecError('solve.sector.parity', 'this model has no reflection symmetry');
  if (selection.charge && !use.charge) throw new SpecError('solve.sector.charge', 'this model does not conserve the total level');
  if (selection.level_flip && !use.level_flip) throw new SpecError('solve.sector.level_flip', 'this model has no level-flip symmetry');

  const plans = planSectors(use, model, selection).sort(sectorOrder(model));
  const actions = new IndexActions(basis);
  const maps = new Map<string, OrbitMap>();
  const orbitsFor = (label: SectorLabel) => {
    const g = groupFor(label);
    const key = `${g.translation}${g.reflection}${g.levelFlip}`;
    let m = maps.get(key);
    if (!m) {
      m = new OrbitMap(basis, g, actions);
      maps.set(key, m);
    }
    return m;
  };

  const states = opts.states;
  let found: Found[] = [];
  const runs: SectorRun[] = [];
  let matvecs = 0;
  let restarts = 0;
  let converged = true;
  let anyLanczos = false;

  // The matrix and the solver's vectors share one arena, so products run in WebAssembly. One
  // arena serves every sector: each sector's matrix and vectors are released before the next,
  // so memory holds one sector at a time (a fresh memory per sector would wait for the GC).
  const arena = VectorArena.acquire();
  for (const plan of plans) {
    const sector = new SectorBasis(orbitsFor(plan.label), plan.label);
    if (sector.dim === 0) continue;
    const mark = arena?.mark();
    const stored = buildSectorOperator(model, basis, sector, arena);
    const threads = opts.threadsFor ? opts.threadsFor(stored.nonzeros()) : 1;
    const op = withThreads(stored, threads);
    try {
      const isComplex = op.isComplex;
      let initial: Float64Array | undefined;
      if (opts.initial) {
        const c = sector.project(opts.initial, opts.initialComplex ?? false, isComplex);
        let n2 = 0;
        for (let k = 0; k < c.length; k++) n2 += c[k] * c[k];
        if (n2 > 1e-12) initial = c;
      }
      const base: EigenOptions = {
        states: 1,
        threads,
        arena,
        denseThreshold: denseThresholdFor(Math.min(states, sector.dim)),
        tolerance: opts.tolerance,
        maxMatvecs: opts.maxMatvecs,
        krylovSize: opts.krylovSize !== undefined ? Math.min(opts.krylovSize, sector.dim) : undefined,
        seed: opts.seed,
        initial,
        // products of the sectors already solved come first, so progress counts the whole solve
        onProgress: opts.onProgress ? (info) => opts.onProgress!({ ...info, matvecs: matvecs + info.matvecs, restarts: restarts + info.restarts }) : undefined,
      };
      const need = Math.min(states, sector.dim);
      const sorted = found.map((f) => f.energy).sort((a, b) => a - b);
      const ceiling = sorted.length >= states ? sorted[states - 1] : Infinity;
      let result;
      if (Number.isFinite(ceiling) && sector.dim > denseThresholdFor(need)) {
        // Screen with the sector's lowest state, converged only as far as the decision needs
        // (see EigenOptions.screenAbove); anything not screened out is solved to the tolerance.
        const first = lowestEigenpairs(op, { ...base, verifyDegeneracy: false, screenAbove: ceiling + degeneracyWindow(ceiling, opts.tolerance) });
        matvecs += first.matvecs;
        restarts += first.restarts;
        if (first.method === 'lanczos') anyLanczos = true;
        if (first.screened) {
          runs.push({ label: plan.label, dimension: sector.dim, method: first.method, iterations: first.matvecs, lowest: first.values[0], screened: true, copies: plan.copies });
          continue;
        }
        result = lowestEigenpairs(op, { ...base, states: need, initial: first.vectors[0] });
        matvecs += result.matvecs;
        restarts += result.restarts;
      } else {
        result = lowestEigenpairs(op, { ...base, states: need });
        matvecs += result.matvecs;
        restarts += result.restarts;
      }
      if (result.method === 'lanczos') anyLanczos = true;
      converged &&= result.converged;
      runs.push({ label: plan.label, dimension: sector.dim, method: result.method, iterations: result.matvecs, lowest: result.values[0], screened: false, copies: plan.copies });
      for (let k = 0; k < result.values.length; k++) {
        const entry = { energy: result.values[k], residual: result.residuals[k], sector, vector: result.vectors[k], complex: isComplex };
        found.push({ ...entry, label: plan.label });
        for (const copy of plan.copies) found.push({ ...entry, label: copy });
      }
      found.sort((a, b) => a.energy - b.energy);
    } finally {
      op.close();
      if (arena && mark !== undefined) arena.release(mark);
    }
    // Keep what can still matter: the lowest `states` and anything degenerate with the ground level.
    const e0 = found[0].energy;
    const window = degeneracyWindow(e0, opts.tolerance);
    found = found.filter((f, k) => k < states || f.energy - e0 <= window);
  }

  // Every kept vector is a copy outside it, so the next solve on this thread may reuse it.
  arena?.recycle();
  if (found.length === 0) throw new SpecError('solve.sector', 'the selected sectors contain no states');
  const e0 = found[0].energy;
  const window = degeneracyWindow(e0, opts.tolerance);
  const ground = found.filter((f) => f.energy - e0 <= window);
  // Copies (k <-> -k) share their representative's probabilities for these diagonal observables:
  // complex conjugation leaves |psi|^2 unchanged, and a reflected translation-invariant state has
  // the same populations, spreads, pair separations and string width.
  const probabilities = new Float64Array(basis.dim);
  for (const g of ground) g.sector!.accumulateProbabilities(g.vector!, g.complex, 1 / ground.length, probabilities);
  const groundStates = opts.expandGround ? ground.filter((g, k) => k === 0 || g.vector !== ground[k - 1].vector).map((g) => g.sector!.expand(g.vector!, g.complex)) : [];
  const answer = found.slice(0, states);
  return {
    energies: answer.map((f) => f.energy),
    labels: answer.map((f) => f.label),
    residuals: answer.map((f) => f.residual),
    converged,
    matvecs,
    restarts,
    degeneracy: ground.length,
    runs,
    groundProbabilities: probabilities,
    groundStates,
    method: anyLanczos ? 'lanczos' : 'dense',
  };
}
