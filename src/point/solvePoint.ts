// One point of the data path: spec -> model -> basis -> operator -> solver -> observables -> record.
// `planPoint` sizes the problem without allocating it; `solvePoint` runs it.

import { basisDimension, buildBasis, MAX_DIMENSION, type PinnedBasis } from '../basis/basis.js';
import { ResourceError, SpecError } from '../errors/errors.js';
import { buildModel, type Model } from '../model/model.js';
import { buildOperator, operatorStorage } from '../operator/build.js';
import { basisProbabilities, pinnedObservables, type CorrelationRequest } from '../observables/pinned.js';
import { separationClasses } from '../observables/separation.js';
import { latticeOf } from '../spec/lattice.js';
import { itinerantObservables } from '../observables/itinerant.js';
import { planFockOperator } from '../operator/fock.js';
import { cutsFor, pinnedEntanglement, pinnedSiteSetEntanglement } from '../observables/entanglement.js';
import {
  assertWithinMemory,
  defaultMemoryLimit,
  estimateSectorMemory,
  estimateSolveMemory,
  largestSector,
  pinnedColumnsPerState,
  type MemoryEstimate,
} from './memory.js';
import {
  defaultKrylovSize,
  denseThresholdFor,
  GROUND_COPIES_CAP,
  lowestEigenpairs,
  type EigenResult,
} from '../solver/eigensolver.js';
import type { Spec } from '../spec/spec.js';
import {
  detectSymmetries,
  planSectors,
  translationSizes,
  type SymmetryCheck,
  type SymmetryName,
} from '../symmetry/group.js';
import { solveInSectors, type SectorSolution, type SectorSolveOptions } from '../symmetry/sectorSolve.js';
import { momentumText, type SectorLabel } from '../symmetry/group.js';
import { defaultProductThreads, ThreadedOperator, withThreads } from '../operator/threaded.js';
import { coreCount } from '../threads/cores.js';
import { VectorArena } from '../simd/arena.js';
import { solveSettings } from '../solver/specSettings.js';
import { buildPointRecord, type PointRecord, type StateRecord } from './record.js';
import { groupLevels, type StateGroup } from '../solver/levels.js';
import type { Observables } from '../observables/pinned.js';

export { gapAboveGround, type PointRecord } from './record.js';

export interface PointPlan {
  model: Model;
  /** Symmetries checked against the operator, and which of them the solve will use. */
  symmetries: SymmetryCheck[];
  used: Record<SymmetryName, boolean> | null;
  dimension: number;
  storage: 'on-the-fly' | 'stored';
  /** Nonzero matrix elements: stored ones, or what a stored matrix would hold for on-the-fly operators. */
  nonzeros: number | null;
  memory: MemoryEstimate;
  /** Sectors solved at once on their own threads (1 without sectors). */
  sectorThreads: number;
}

export interface SolveOptions {
  maxMemory?: number;
  /** How the user sets `maxMemory` (the command line's flag), named when a problem is over it. */
  memoryLimitName?: string;
  /** Start vector for the eigensolver (warm start from a neighbouring point). */
  initial?: Float64Array;
  /** Most threads one matrix-vector product may use (a scan running points in parallel passes its share). */
  threads?: number;
  /** Products, restarts and the worst residual so far; in a sector-by-sector solve, also where it stands. */
  onProgress?: SectorSolveOptions['onProgress'];
  /**
   * Whether the caller uses `groundStates` (default true). A sector solve otherwise builds them
   * only for entanglement: expanding sector states to the full space costs a pass over it per
   * state (about 6% of a 10x4 solve) and the full-space vectors' memory.
   */
  groundStates?: boolean;
  /** Keep states for saving: the ground level's copies, or every solved state (on the full space). */
  keepStates?: 'ground' | 'all';
  /** How the user asks for `keepStates` (the command line's flag), named when the states cannot be kept. */
  keepStatesName?: string;
}

/**
 * Sectors up to this many vector entries (doubles) are solved side by side, one thread each;
 * larger ones one at a time with every core on each product. Measured (4 states, 2 cores): 14x3
 * (largest sector 0.34 M entries) 13.4 s side by side against 20-25 s one at a time; 12x4 (1.4 M)
 * 70 s against 77 s; 16x3 (2.7 M) 351 s against 312 s, with 5.0 GB against 3.0 GB at the peak.
 */
const SIDE_BY_SIDE_ENTRIES = 1 << 21;
/**
 * Below this many states a point is too quick to pay for starting the extra thread (about 0.1 s):
 * measured 9x3 points at 0.27 s one at a time against 0.38 s side by side, 8x4 and 9x4 even, 10x4
 * 2.9 s against 3.1 s, 11x4 17 s against 33 s.
 */
const SIDE_BY_SIDE_MIN_STATES = 1 << 19;

/**
 * Sizes a point: dimension, storage and memory estimate, allocating nothing large. Sectors are
 * solved side by side (see SIDE_BY_SIDE_ENTRIES and SIDE_BY_SIDE_MIN_STATES) on as many threads as `limits.threads` (default:
 * every core) and the spec allow, fewer when the sectors solved at once would not fit in
 * `limits.maxMemory`.
 */
export function planPoint(
  spec: Spec,
  limits: {
    maxMemory?: number;
    threads?: number;
    groundStates?: boolean;
    /** States kept for saving: the ground level's copies are expanded to the full space, with 'all' every solved state too. */
    keepStates?: 'ground' | 'all';
  } = {},
): PointPlan {
  const model = buildModel(spec);
  const dimension = basisDimension(model);
  const states = Math.min(spec.solve.states, dimension);
  const { symmetries, used } = chooseSymmetries(spec, model);
  const threadsFor = (work: number) => productThreads(spec, { threads: limits.threads }, work);
  if (used) {
    const sectors = planSectors(used, model, spec.solve.sector ?? {}).length;
    const { entries, nnz } = largestSector(dimension, model, used);
    const allowed =
      entries > SIDE_BY_SIDE_ENTRIES || dimension < SIDE_BY_SIDE_MIN_STATES
        ? 1
        : Math.min(
            sectors,
            coreCount(),
            limits.threads ?? Infinity,
            spec.solve.threads === 'auto' ? Infinity : spec.solve.threads,
          );
    const limit = limits.maxMemory ?? defaultMemoryLimit();
    // As solvePinnedInSectors decides.
    const expandGround =
      (limits.groundStates !== false && dimension <= EXPAND_LIMIT) ||
      (model.kind === 'pinned' &&
        (cutsFor(spec.solve.entanglement, model.sites, model.levels).length > 0 ||
          spec.solve.entanglementSites.length > 0)) ||
      limits.keepStates !== undefined;
    const estimate = (concurrent: number) =>
      estimateSectorMemory({
        dim: dimension,
        model,
        used,
        krylovVectors: spec.solve.krylov ?? defaultKrylovSize(states, Infinity),
        states,
        concurrent,
        productThreads: threadsFor(nnz),
        expandGround,
        eachState: spec.solve.observables === 'each',
        savedStates: limits.keepStates === 'all' ? states : 0,
        reorderedStates: reorderedStates(spec, model, states),
      });
    let sectorThreads = Math.max(1, allowed);
    let memory = estimate(sectorThreads);
    while (sectorThreads > 1 && memory.totalBytes > limit) memory = estimate(--sectorThreads);
    return { model, symmetries, used, dimension, storage: 'stored', nonzeros: null, memory, sectorThreads };
  }
  // Itinerant kinds store their matrix; its size is known in closed form before building.
  const cuts = spec.solve.entanglement;
  if (model.kind !== 'pinned' && ((cuts !== 'auto' && cuts !== 'none') || spec.solve.entanglementSites.length > 0)) {
    throw new SpecError(
      'solve.entanglement',
      `entanglement (cuts or site lists) is computed for pinned molecules only, not for kind = "${model.kind}"; remove the key`,
    );
  }
  const fock = model.kind === 'pinned' ? null : planFockOperator(model, dimension);
  const work = fock ? fock.nonzeros : dimension * pinnedColumnsPerState(model);
  const memory = estimateSolveMemory({
    dim: dimension,
    isComplex: model.isComplex,
    operatorBytes: fock ? fock.bytes : dimension * 8, // the stored Fock matrix, or the pinned diagonal
    krylovVectors: spec.solve.krylov ?? defaultKrylovSize(states, dimension),
    states,
    denseThreshold: denseThresholdFor(states),
    threads: threadsFor(work),
    // Itinerant observables read the states row by row, allocating nothing of the dimension.
    eachState: spec.solve.observables === 'each' && model.kind === 'pinned',
    reorderedStates: reorderedStates(spec, model, states),
  });
  return {
    model,
    symmetries,
    used: null,
    dimension,
    storage: fock ? 'stored' : 'on-the-fly',
    nonzeros: fock ? fock.nonzeros : null,
    memory,
    sectorThreads: 1,
  };
}

/** The symmetries a pinned spec really has (checked on its operator) and those the solve will use. */
/**
 * Ground states copied with their sites reordered for the entanglement of site lists (none when
 * every list is sites 0..|A|-1, or for itinerant kinds); one copy per ground state, counted as
 * `states` since the ground level's size is known only after the solve.
 */
function reorderedStates(spec: Spec, model: Model, states: number): number {
  if (model.kind !== 'pinned') return 0;
  const reordered = spec.solve.entanglementSites.some((set) => [...set].sort((a, b) => a - b).some((s, k) => s !== k));
  return reordered ? states : 0;
}

function chooseSymmetries(
  spec: Spec,
  model: Model,
): { symmetries: SymmetryCheck[]; used: Record<SymmetryName, boolean> | null } {
  const choice = spec.solve.symmetries;
  // A selection the solve would not use must not quietly give the whole space's answer.
  const selects = Object.keys(spec.solve.sector ?? {}).length > 0;
  if (model.kind !== 'pinned') {
    const key = selects ? 'solve.sector' : Array.isArray(choice) ? 'solve.symmetries' : null;
    if (key)
      throw new SpecError(
        key,
        `symmetry sectors are used for pinned chains only, not for kind = "${model.kind}"; remove the key`,
      );
    return { symmetries: [], used: null };
  }
  if (choice === 'none') {
    if (selects)
      throw new SpecError('solve.sector', 'selects sectors, but solve.symmetries is "none"; remove one of the two');
    return { symmetries: [], used: null };
  }
  const dimension = basisDimension(model);
  if (dimension > MAX_DIMENSION) return { symmetries: [], used: null };
  const symmetries = detectSymmetries(model, buildBasis(model) as PinnedBasis);
  const used: Record<SymmetryName, boolean> = {
    translation: false,
    reflection: false,
    level_flip: false,
    charge: false,
    point_group: false,
    automorphism: false,
  };
  if (choice !== 'auto')
    for (const name of choice)
      if (!symmetries.some((c) => c.name === name))
        throw new SpecError(
          'solve.symmetries',
          `${name}: acts off chains only; a chain has translation and reflection`,
        );
  for (const check of symmetries) {
    const wanted = choice === 'auto' || choice.includes(check.name);
    if (wanted && check.present) used[check.name] = true;
    if (choice !== 'auto' && choice.includes(check.name) && !check.present) {
      throw new SpecError('solve.symmetries', `${check.name}: ${check.detail}`);
    }
  }
  const any = Object.values(used).some(Boolean);
  if (!any && selects) throw new SpecError('solve.sector', 'this model has no symmetry to select sectors of');
  return { symmetries, used: any ? used : null };
}

export interface SolvedPoint {
  record: PointRecord;
  /**
   * Ground-state vectors (a degenerate ground space gives several), for warm starts and analysis.
   * Empty after a sector solve asked with `groundStates: false`, or one too large to expand.
   */
  groundStates: Float64Array[];
  /** The full-space eigensolver result (absent when solved in symmetry sectors). */
  eigen?: EigenResult;
  /** The states asked for by `keepStates`, on the full basis. */
  kept?: KeptStates;
}

/** States on the full basis, lowest first: real rows of `dim`, or interleaved complex rows of 2 `dim`. */
export interface KeptStates {
  which: 'ground' | 'all';
  vectors: Float64Array[];
  interleaved: boolean;
  energies: number[];
  /** Each row's sector (every solved state from a sector solve only). */
  labels: SectorLabel[] | null;
}

export function solvePoint(spec: Spec, options: SolveOptions = {}): SolvedPoint {
  const started = performance.now();
  const plan = planPoint(spec, {
    maxMemory: options.maxMemory,
    threads: options.threads,
    groundStates: options.keepStates ? true : options.groundStates,
    keepStates: options.keepStates,
  });
  assertWithinMemory(plan.memory, options.maxMemory ?? defaultMemoryLimit(), 'this problem', options.memoryLimitName);
  const basis = buildBasis(plan.model);
  if (plan.used && basis.kind === 'pinned') return solvePinnedInSectors(spec, plan, basis, options, started);
  // A stored matrix is built in an arena, beside the solver's vectors, so its products run in WebAssembly.
  const arena = basis.kind === 'pinned' ? null : VectorArena.acquire();
  const op = buildOperator(plan.model, basis, arena);
  const states = Math.min(spec.solve.states, basis.dim);
  const threads = productThreads(spec, options, op.nonzeros());
  const threaded = withThreads(op, threads, plan.model, basis.kind === 'pinned' ? basis : undefined);
  let eigen: EigenResult;
  try {
    eigen = lowestEigenpairs(threaded, {
      states,
      ...solveSettings(spec.solve),
      denseThreshold: denseThresholdFor(states),
      initial: options.initial,
      onProgress: options.onProgress,
      throwOnFailure: false,
      groundCopies: groundCopiesCap(
        states,
        (op.isComplex ? 16 : 8) * basis.dim,
        plan.memory.totalBytes,
        options.maxMemory,
      ),
      threads,
      // The threads' own arena: vectors kept there are multiplied in place, without copies.
      arena: threaded instanceof ThreadedOperator ? threaded.arena : arena,
    });
  } finally {
    threaded.close();
  }
  // The solver's results are copies, and the operator is done with: the next point may reuse the memory.
  arena?.recycle();
  const ground = eigen.vectors.slice(0, eigen.degeneracy);
  const correlations = correlationRequest(spec, plan.model);
  const observables =
    basis.kind === 'pinned'
      ? pinnedObservables(basis, basisProbabilities(ground, basis.dim, op.isComplex), correlations)
      : itinerantObservables(basis, ground, op.isComplex, plan.model.chainPeriodic, correlations);
  // Entanglement needs the state itself, so it is computed here; solve.entanglement keeps it cheap by default.
  const cuts = basis.kind === 'pinned' ? cutsFor(spec.solve.entanglement, basis.sites, basis.levels) : [];
  const siteSets = basis.kind === 'pinned' ? spec.solve.entanglementSites : [];
  if (cuts.length > 0)
    observables.entanglement = pinnedEntanglement(ground, basis.sites, basis.levels, op.isComplex, cuts);
  if (siteSets.length > 0)
    observables.entanglement = pinnedSiteSetEntanglement(ground, basis.sites, basis.levels, op.isComplex, siteSets);
  // `values` also holds copies of the ground level beyond `states`.
  const energies = Array.from(eigen.values).slice(0, states);
  const each =
    spec.solve.observables === 'each'
      ? stateRecords(
          Array.from(eigen.values),
          null,
          groupLevels({
            energies: eigen.values,
            sectors: null,
            tolerance: spec.solve.tolerance,
            dimension: basis.dim,
            converged: eigen.converged,
            groundComplete: eigen.degeneracyComplete ?? false,
          }),
          (members) => {
            const vectors = members.map((m) => eigen.vectors[m]);
            return basis.kind === 'pinned'
              ? pinnedObservables(basis, basisProbabilities(vectors, basis.dim, op.isComplex), correlations)
              : itinerantObservables(basis, vectors, op.isComplex, plan.model.chainPeriodic, correlations);
          },
        )
      : undefined;
  const record = buildPointRecord({
    energies,
    observables,
    model: plan.model,
    dimension: basis.dim,
    operator: operatorStorage(op),
    nonzeros: op.nonzeros(),
    solve: {
      method: eigen.method,
      matvecs: eigen.matvecs,
      restarts: eigen.restarts,
      residuals: Array.from(eigen.residuals).slice(0, states),
      converged: eigen.converged,
      degeneracy: eigen.degeneracy,
      degeneracyComplete: eigen.degeneracyComplete ?? false,
    },
    tolerance: spec.solve.tolerance,
    started,
    memoryBytes: plan.memory.totalBytes,
    states: each,
  });
  const kept: KeptStates | undefined = options.keepStates
    ? {
        which: options.keepStates,
        vectors: options.keepStates === 'ground' ? ground : eigen.vectors,
        interleaved: op.isComplex,
        energies: Array.from(eigen.values).slice(
          0,
          options.keepStates === 'ground' ? eigen.degeneracy : eigen.vectors.length,
        ),
        labels: null,
      }
    : undefined;
  return { record, groundStates: ground, eigen, kept };
}

/**
 * Most copies of the ground level to look for: GROUND_COPIES_CAP, fewer when their vectors
 * (`vectorBytes` each) would not fit in the memory left beside the estimate; never fewer than `states`.
 */
function groundCopiesCap(
  states: number,
  vectorBytes: number,
  estimateBytes: number,
  maxMemory: number | undefined,
): number {
  const spare = (maxMemory ?? defaultMemoryLimit()) - estimateBytes;
  return Math.max(states, Math.min(GROUND_COPIES_CAP, states + Math.floor(Math.max(0, spare) / vectorBytes)));
}

/** Threads for one product: the spec's count or, by default, as many as the work pays for; never more than the caller allows. */
function productThreads(spec: Spec, options: { threads?: number }, work: number): number {
  const wanted = spec.solve.threads === 'auto' ? defaultProductThreads(work) : spec.solve.threads;
  return Math.max(1, Math.min(wanted, options.threads ?? wanted));
}

/** What the solved point's correlations need: the chain's periodicity, the pairs grouped by separation vector. */
function correlationRequest(spec: Spec, model: Model): CorrelationRequest {
  return { periodic: model.chainPeriodic, separations: separationClasses(model.geometry, latticeOf(spec)) };
}

/** Vectors this large are not expanded to the full space for callers (warm starts, entanglement). */
const EXPAND_LIMIT = 1 << 22;

function solvePinnedInSectors(
  spec: Spec,
  plan: PointPlan,
  basis: PinnedBasis,
  options: SolveOptions,
  started: number,
): SolvedPoint {
  const model = plan.model;
  const states = Math.min(spec.solve.states, basis.dim);
  const cuts = cutsFor(spec.solve.entanglement, basis.sites, basis.levels);
  // Copies beyond `states` are expanded to the full space as interleaved complex vectors (ground
  // states, saved states), so each costs 16 bytes an entry whatever the model's arithmetic.
  const groundCopies = groundCopiesCap(states, 16 * basis.dim, plan.memory.totalBytes, options.maxMemory);
  const solution = solveInSectors(model, basis, plan.used!, {
    states,
    ...solveSettings(spec.solve),
    selection: spec.solve.sector,
    initial: options.initial,
    initialComplex: options.initial ? options.initial.length === 2 * basis.dim : false,
    expandGround:
      (options.groundStates !== false && basis.dim <= EXPAND_LIMIT) ||
      cuts.length > 0 ||
      spec.solve.entanglementSites.length > 0 ||
      !!options.keepStates,
    expandAll: options.keepStates === 'all',
    eachState: spec.solve.observables === 'each',
    threadsFor: (work: number) => productThreads(spec, options, work),
    sectorThreads: plan.sectorThreads,
    onProgress: options.onProgress,
    groundCopies,
  });
  // Callers get ground states in the model's own arithmetic: a real H has a real ground space,
  // spanned by the real and imaginary parts of its complex sector states.
  const groundStates = model.isComplex ? solution.groundStates : realSpan(solution.groundStates, basis.dim);
  const correlations = correlationRequest(spec, model);
  const observables = pinnedObservables(basis, solution.groundProbabilities, correlations);
  // A ground level with more copies than the cap is not expanded (see solveInSectors).
  if (cuts.length > 0 && groundStates.length > 0)
    observables.entanglement = pinnedEntanglement(groundStates, basis.sites, basis.levels, model.isComplex, cuts);
  const siteSets = spec.solve.entanglementSites;
  if (siteSets.length > 0 && groundStates.length > 0)
    observables.entanglement = pinnedSiteSetEntanglement(
      groundStates,
      basis.sites,
      basis.levels,
      model.isComplex,
      siteSets,
    );
  const energies = solution.energies;
  const L = model.sites;
  const sizes = translationSizes(model);
  // k = 2 pi m / L on a chain; per periodic direction, k_d = 2 pi m_d / L_d, on a lattice
  const labelled = (l: SectorLabel) => ({
    ...l,
    k:
      l.momentum === null
        ? null
        : typeof l.momentum === 'number'
          ? (2 * Math.PI * l.momentum) / L
          : l.momentum.map((m, d) => (2 * Math.PI * m) / (sizes as number[])[d]),
  });
  const found = solution.eachState;
  let each: StateRecord[] | undefined;
  if (found) {
    // One full-space buffer, refilled for each group: the probabilities of one mixture at a time.
    const probabilities = new Float64Array(basis.dim);
    each = stateRecords(
      found.energies,
      found.labels.map(labelled),
      groupLevels({
        energies: found.energies,
        sectors: found.labels.map((l) => `${momentumText(l.momentum)},${l.parity},${l.level_flip},${l.charge}`),
        tolerance: spec.solve.tolerance,
        dimension: basis.dim,
        converged: solution.converged,
        groundComplete: solution.degeneracyComplete,
      }),
      (members) => {
        probabilities.fill(0);
        found.accumulateProbabilities(members, probabilities);
        return pinnedObservables(basis, probabilities, correlations);
      },
    );
  }
  const record = buildPointRecord({
    energies,
    observables,
    model,
    dimension: basis.dim,
    operator: 'stored',
    // Every sector's matrix that was built (a copy k <-> -k is not built twice).
    nonzeros: solution.runs.reduce((sum, run) => sum + run.nonzeros, 0),
    solve: solution,
    tolerance: spec.solve.tolerance,
    started,
    memoryBytes: plan.memory.totalBytes,
    symmetries: (Object.keys(plan.used!) as SymmetryName[]).filter((k) => plan.used![k]),
    sectorRuns: solution.runs,
    sectors: solution.labels.map(labelled),
    states: each,
  });
  const keep = { which: options.keepStates, name: options.keepStatesName, copies: Math.max(states, groundCopies) };
  return { record, groundStates, kept: keptFromSectors(keep, model, solution, groundStates) };
}

/**
 * The record's `states`: one entry per found state, each group's observables computed once and
 * shared by its members (an equal mixture of copies of a level in one sector).
 */
function stateRecords(
  energies: number[],
  sectors: StateRecord['sector'][] | null,
  groups: StateGroup[],
  observablesOf: (members: number[]) => Observables,
): StateRecord[] {
  const out = new Array<StateRecord>(energies.length);
  for (const group of groups) {
    const observables = observablesOf(group.members);
    for (const index of group.members) {
      out[index] = {
        index,
        energy: energies[index],
        sector: sectors ? sectors[index] : null,
        observables,
        ...(group.members.length > 1 ? { mixture_of: group.members } : {}),
        ...(group.incomplete ? { level_incomplete: true as const } : {}),
      };
    }
  }
  return out;
}

function keptFromSectors(
  keep: { which: 'ground' | 'all' | undefined; name: string | undefined; copies: number },
  model: Model,
  solution: SectorSolution,
  groundStates: Float64Array[],
): KeptStates | undefined {
  const { which } = keep;
  if (!which) return undefined;
  if (which === 'all') {
    const all = solution.allStates!;
    return { which, vectors: all.vectors, interleaved: true, energies: all.energies, labels: all.labels };
  }
  if (groundStates.length === 0) {
    const most =
      keep.copies >= GROUND_COPIES_CAP
        ? `more than the ${GROUND_COPIES_CAP} that are ever expanded to the full space`
        : `more than the ${keep.copies} that fit in memory on the full space`;
    throw new ResourceError(
      `the ground level has ${solution.degeneracy} copies, ${most}; ` +
        (keep.name ? `${keep.name} cannot save its states` : 'its states cannot be saved'),
    );
  }
  // The ground space's basis may mix sectors (a real basis of a k, -k pair), so rows carry no sector.
  const e0 = solution.energies[0];
  return {
    which,
    vectors: groundStates,
    interleaved: model.isComplex,
    energies: groundStates.map((_, k) => solution.energies[k] ?? e0),
    labels: null,
  };
}

/** An orthonormal real basis of the span of the real and imaginary parts of complex vectors. */
function realSpan(complexStates: Float64Array[], dim: number): Float64Array[] {
  const out: Float64Array[] = [];
  for (const psi of complexStates) {
    for (const part of [0, 1]) {
      const v = new Float64Array(dim);
      for (let s = 0; s < dim; s++) v[s] = psi[2 * s + part];
      for (const u of out) {
        let d = 0;
        for (let s = 0; s < dim; s++) d += u[s] * v[s];
        for (let s = 0; s < dim; s++) v[s] -= d * u[s];
      }
      let n = 0;
      for (let s = 0; s < dim; s++) n += v[s] * v[s];
      n = Math.sqrt(n);
      if (n < 1e-6) continue;
      for (let s = 0; s < dim; s++) v[s] /= n;
      out.push(v);
    }
  }
  return out;
}
