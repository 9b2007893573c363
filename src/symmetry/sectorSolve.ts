// Solving a pinned chain sector by sector: the lowest `states` over all sectors (or the sectors the
// user names), each labelled with its quantum numbers, and the ground-space probabilities for the
// observables, without ever forming a full-space vector unless asked.
//
// Sectors are independent problems, so with several threads each solves whole sectors (building
// its matrix too), taking them one by one from a shared counter: no hand-off per product, and the
// sector builds run in parallel. The threads share the lowest energies found so far, so each can
// screen a sector out against everything already known.

import { MessageChannel, receiveMessageOnPort, Worker, type MessagePort } from 'node:worker_threads';
import type { PinnedBasis } from '../basis/basis.js';
import { OrbitMap, SectorBasis, type GroupUse, type OrbitMapParts, type PointElements } from './sectorBasis.js';
import { groupElements } from './pointGroup.js';
import { errorFromThread, SpecError } from '../errors/errors.js';
import type { Model } from '../model/model.js';
import { ChunkSpares, CsrBuilder, type BuiltRows } from '../operator/csr.js';
import type { HermitianOperator } from '../operator/hermitian.js';
import { buildSectorOperator, buildSectorRows } from './sectorOperator.js';
import { ProductTeam, withThreads } from '../operator/threaded.js';
import { VectorArena } from '../simd/arena.js';
import { KeptTeam, spinLocked, workerScript } from '../threads/team.js';
import { degeneracyWindow, denseThresholdFor, lowestEigenpairs, type EigenOptions } from '../solver/eigensolver.js';
import { residualNorm } from '../solver/residual.js';
import { KernelTeam } from '../linalg/kernelTeam.js';
import { sectorSizes } from './sectorSizes.js';
import {
  IndexActions,
  latticeTranslations,
  momentumCode,
  momentumText,
  planSectors,
  pointGroupInUse,
  pointGroupOf,
  pointGroupText,
  translationSizes,
  type SectorLabel,
  type SectorPlan,
  type SectorSelection,
  type SymmetryName,
  type TranslationGroup,
} from './group.js';

export interface SectorRun {
  label: SectorLabel;
  dimension: number;
  method: 'dense' | 'lanczos';
  iterations: number;
  lowest: number;
  /** True when only the sector's lowest state was needed to show it adds nothing below the answer. */
  screened: boolean;
  copies: SectorLabel[];
  /** Stored elements of the sector's matrix. */
  nonzeros: number;
}

export interface SectorSolution {
  energies: number[];
  labels: SectorLabel[];
  residuals: number[];
  converged: boolean;
  matvecs: number;
  restarts: number;
  degeneracy: number;
  /** Whether every copy of the ground level was found (see SectorSolveOptions.groundCopies). */
  degeneracyComplete: boolean;
  runs: SectorRun[];
  /** |psi(s)|^2 averaged over the degenerate ground space, on the full basis. */
  groundProbabilities: Float64Array;
  /** Full-space ground states (interleaved complex), only when `expandGround` was asked. */
  groundStates: Float64Array[];
  /**
   * Every kept state (the lowest `states` and every copy of the ground level) on the full basis,
   * interleaved complex, with its energy and sector, lowest first; only when `expandAll` was asked.
   */
  allStates?: { vectors: Float64Array[]; energies: number[]; labels: SectorLabel[] };
  /** Every kept state in its own sector (as `allStates`, without expansion); only when `eachState` was asked. */
  eachState?: KeptSectorStates;
  method: 'dense' | 'lanczos';
}

/**
 * Every kept state (the lowest `states` and every copy of the ground level), lowest first, with its
 * energy and sector, and its probabilities computed from its sector vector on request.
 */
export interface KeptSectorStates {
  energies: number[];
  labels: SectorLabel[];
  /**
   * Adds the equal mixture of the given states' |psi(s)|^2 into `out` (full basis; `out` is not
   * cleared). A k <-> -k copy counts with its representative's probabilities: the same for these
   * diagonal observables (see solveInSectors).
   */
  accumulateProbabilities(members: number[], out: Float64Array): void;
}

/** Where a sector-by-sector solve stands, for a progress line. */
export interface SectorProgress {
  /** Sectors taken so far (by every thread), 1-based. */
  index: number;
  count: number;
  /** The sector this thread is solving. */
  label: SectorLabel;
  dimension: number;
  /** Share of the solved space in the sectors taken before this one (their states over all states). */
  spaceBefore: number;
}

function labelKey(l: SectorLabel): string {
  return `${momentumText(l.momentum)},${l.parity},${l.level_flip},${l.charge},${pointGroupText(l.point_group)}`;
}

function sectorDimensionsByKey(
  model: Model,
  use: Record<SymmetryName, boolean>,
  selection: SectorSelection,
): Map<string, number> {
  return new Map(sectorSizes(model, use, selection).map((s) => [labelKey(s.label), s.dimension]));
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
  /** Also expand every kept state, not only the ground level (for saving the states). */
  expandAll?: boolean;
  /** Hand back every kept state in its sector, for its own observables (solve.observables = "each"). */
  eachState?: boolean;
  /** Threads for one product of a sector whose stored matrix has `work` nonzeros (default 1), when sectors are solved one at a time. */
  threadsFor?: (work: number) => number;
  /** Sectors solved at once, each on its own thread (default 1); products then use one thread each. */
  sectorThreads?: number;
  /** Sectors with at least this many rows are built by two threads when solved one at a time with threaded products (default 2^16; tests lower it). */
  splitBuildRows?: number;
  onProgress?: (info: Parameters<NonNullable<EigenOptions['onProgress']>>[0] & { sector?: SectorProgress }) => void;
  /**
   * Most copies of its lowest level a sector looks for when that level may be the ground level
   * (default `states`). Fewer copies in a sector than this are all found, whatever `states` is.
   */
  groundCopies?: number;
}

interface Found {
  energy: number;
  label: SectorLabel;
  residual: number;
  sector: SectorBasis | null;
  vector: Float64Array | null;
  complex: boolean;
}

/** One sector's states, in the sector's own coordinates (vectors dropped once they cannot matter). */
interface SectorStates {
  plan: number;
  energies: number[];
  residuals: number[];
  vectors: (Float64Array | null)[];
  complex: boolean;
}

/** What solving one sector gives, on whichever thread solved it. */
interface SectorOutcome {
  run: SectorRun;
  states: SectorStates;
  matvecs: number;
  restarts: number;
  converged: boolean;
  /** False when the sector's lowest level may have copies beyond those found (its cap was reached). */
  groundComplete: boolean;
}

function groupFor(label: SectorLabel): GroupUse & { point: string[] } {
  return {
    translation: label.momentum !== null,
    reflection: label.parity !== null,
    levelFlip: label.level_flip !== null,
    point: Object.keys(label.point_group ?? {}),
  };
}

/** Charges near the middle first, then momenta 0 and pi, then the rest: ground states usually live there. */
function sectorOrder(model: Model) {
  const sizes = translationSizes(model);
  const middle = (model.sites * (model.levels - 1)) / 2;
  return (a: { label: SectorLabel }, b: { label: SectorLabel }) => {
    const qa = a.label.charge === null ? 0 : Math.abs(a.label.charge - middle);
    const qb = b.label.charge === null ? 0 : Math.abs(b.label.charge - middle);
    if (qa !== qb) return qa - qb;
    // Momenta 0 and pi first: the low states of these chains sit there most often (Marshall-type
    // sign structures), and the sooner the lowest `states` are known, the sooner the other
    // sectors are screened out after a short partial solve. The order never changes the result.
    const edge = (m: number | number[] | null) =>
      m === null
        ? 0
        : typeof m === 'number'
          ? m === 0 || 2 * m === model.sites
            ? 0
            : 1
          : m.every((x, d) => x === 0 || 2 * x === (sizes as number[])[d])
            ? 0
            : 1;
    const ea = edge(a.label.momentum);
    const eb = edge(b.label.momentum);
    if (ea !== eb) return ea - eb;
    const code = (m: number | number[] | null) => (m === null ? 0 : momentumCode(m, sizes));
    return code(a.label.momentum) - code(b.label.momentum);
  };
}

// ---------------------------------------------------------------------------------------------
// State shared by the threads of one solve: the next sector to take, the lowest energies found
// (with multiplicity, copies included) behind a small lock, products done, helpers finished.

const LOCK = 0;
const NEXT = 1;
const HELPERS_DONE = 2;
const MATVECS = 3;
const WORDS = 4;

class SharedProgress {
  readonly words: Int32Array;
  /** The lowest `states` energies found so far, ascending; +Infinity where none yet. */
  readonly lowest: Float64Array;

  constructor(buffers: { words: Int32Array; lowest: Float64Array }) {
    this.words = buffers.words;
    this.lowest = buffers.lowest;
  }

  static create(states: number): SharedProgress {
    const lowest = new Float64Array(new SharedArrayBuffer(8 * states)).fill(Infinity);
    return new SharedProgress({ words: new Int32Array(new SharedArrayBuffer(4 * WORDS)), lowest });
  }

  private locked<T>(body: () => T): T {
    return spinLocked(this.words, LOCK, body);
  }

  /** Index of the next sector to solve (past the end: none left). */
  claim(): number {
    return Atomics.add(this.words, NEXT, 1);
  }

  /** Sectors taken so far by every thread. */
  claimed(): number {
    return Atomics.load(this.words, NEXT);
  }

  /** The ground energy and the energy every new state must stay below to enter the answer. */
  bounds(): { ground: number; ceiling: number } {
    return this.locked(() => ({ ground: this.lowest[0], ceiling: this.lowest[this.lowest.length - 1] }));
  }

  /** Adds a sector's energies, each `copies + 1` times (its k <-> -k copies have the same). */
  publish(energies: number[], copies: number): void {
    this.locked(() => {
      const all = Array.from(this.lowest);
      for (const e of energies) for (let c = 0; c <= copies; c++) all.push(e);
      all.sort((a, b) => a - b);
      this.lowest.set(all.slice(0, this.lowest.length));
    });
  }

  addMatvecs(count: number): void {
    Atomics.add(this.words, MATVECS, count);
  }

  matvecs(): number {
    return Atomics.load(this.words, MATVECS);
  }

  helperDone(): void {
    Atomics.add(this.words, HELPERS_DONE, 1);
    Atomics.notify(this.words, HELPERS_DONE);
  }

  waitForHelpers(count: number): void {
    let done;
    while ((done = Atomics.load(this.words, HELPERS_DONE)) < count) Atomics.wait(this.words, HELPERS_DONE, done, 1000);
  }
}

/** Whether a found energy can still be part of the answer: below the ceiling, or degenerate with the ground level. */
function canMatter(energy: number, bounds: { ground: number; ceiling: number }, tolerance: number): boolean {
  // Twice the window: the final filter uses the final ground level and ceiling, which only go down.
  const { ground, ceiling } = bounds;
  if (!Number.isFinite(ceiling)) return true;
  return (
    energy <= ceiling + 2 * degeneracyWindow(ceiling, tolerance) ||
    energy - ground <= 2 * degeneracyWindow(ground, tolerance)
  );
}

/** The orbit maps of the groups the sectors use, built once (shared between threads when asked). */
export class OrbitMaps {
  private readonly maps = new Map<string, OrbitMap>();
  private actions: IndexActions | null = null;
  private readonly lattice: TranslationGroup | null;

  constructor(
    private readonly model: Model,
    private readonly basis: PinnedBasis,
    private readonly shared: boolean,
    parts: Record<string, OrbitMapParts> = {},
  ) {
    for (const [key, p] of Object.entries(parts)) this.maps.set(key, OrbitMap.fromParts(p));
    const t = model.geometry.isChain ? null : latticeTranslations(model.geometry);
    this.lattice = typeof t === 'string' ? null : t;
  }

  for(label: SectorLabel): OrbitMap {
    const g = groupFor(label);
    const key = `${g.translation}${g.reflection}${g.levelFlip}${g.point.join('+')}`;
    let m = this.maps.get(key);
    if (!m) {
      this.actions ??= new IndexActions(this.basis);
      let point: PointElements | null = null;
      if (g.point.length > 0) {
        const group = pointGroupOf(this.model, this.basis);
        if (typeof group === 'string') throw new Error(`a sector uses a point group, but none was found: ${group}`);
        const used = g.point.map((name) => group.names.indexOf(name));
        const orders = used.map((k) => group.orders[k]);
        point = {
          names: g.point,
          orders,
          elements: groupElements(
            used.map((k) => group.generators[k]),
            orders,
            this.model.sites,
          ),
        };
      }
      m = new OrbitMap(this.basis, g, this.actions, this.shared, this.lattice, point);
      this.maps.set(key, m);
    }
    return m;
  }

  parts(): Record<string, OrbitMapParts> {
    return Object.fromEntries([...this.maps].map(([key, m]) => [key, m.parts()]));
  }
}

/** What a helper thread needs: everything is cloned, except the orbit maps and progress, which are shared. */
interface HelperData {
  model: Model;
  basis: PinnedBasis;
  plans: SectorPlan[];
  opts: Omit<SectorSolveOptions, 'threadsFor' | 'onProgress' | 'sectorThreads' | 'expandGround' | 'eachState'>;
  maps: Record<string, OrbitMapParts>;
  progress: { words: Int32Array; lowest: Float64Array };
  port: MessagePort;
}

type HelperMessage = { kind: 'sector'; outcome: SectorOutcome } | { kind: 'error'; name: string; message: string };

/** What a thread solves its sectors with: the same for every sector it takes. */
interface SectorContext {
  model: Model;
  basis: PinnedBasis;
  plans: SectorPlan[];
  maps: OrbitMaps;
  opts: SectorSolveOptions;
  shared: SharedProgress;
  /** Where each sector's matrix and Lanczos vectors live; released after each sector. */
  arena: VectorArena | null;
  spares: ChunkSpares;
  /** Threads for one product of a sector whose stored matrix has `work` nonzeros. */
  threadsFor: (work: number) => number;
  /** Progress of the solve of sector `index` (none when nobody listens). */
  progressFor?: (index: number) => EigenOptions['onProgress'] | undefined;
  /** A thread that builds the later rows of large sectors. */
  builds?: BuildHelper | null;
  /** Kernel helper threads kept for the sectors' solves on `threads` threads. */
  teamFor?: ((threads: number) => KernelTeam | null) | null;
  /** Product helper threads kept for the sectors' products on `threads` threads. */
  productTeamFor?: ((threads: number) => ProductTeam | null) | null;
}

/**
 * Solves one sector: screened out against the current ceiling when it cannot contribute, else its
 * lowest `states` (or fewer, if it is smaller) to the tolerance.
 */
function solveSector(context: SectorContext, index: number): SectorOutcome | null {
  const { model, basis, plans, maps, opts, shared, arena, spares, threadsFor, builds, teamFor, productTeamFor } =
    context;
  const onProgress = context.progressFor?.(index);
  const plan = plans[index];
  const states = opts.states;
  const sector = new SectorBasis(maps.for(plan.label), plan.label);
  if (sector.dim === 0) return null;
  const mark = arena?.mark();
  const split =
    builds && sector.dim >= (opts.splitBuildRows ?? SPLIT_BUILD_ROWS) ? builds.rowsFrom(index, sector.dim) : null;
  const stored = buildSectorOperator(model, basis, sector, arena, spares, split);
  const threads = threadsFor(stored.nonzeros());
  const op = withThreads(stored, threads, undefined, undefined, productTeamFor?.(threads) ?? null);
  const tally: SectorTally = { matvecs: 0, restarts: 0 };
  try {
    const isComplex = op.isComplex;
    const initial = sectorStart(sector, opts, isComplex);
    const base: EigenOptions = {
      states: 1,
      threads,
      team: teamFor?.(threads) ?? null,
      arena,
      denseThreshold: denseThresholdFor(Math.min(states, sector.dim)),
      tolerance: opts.tolerance,
      maxMatvecs: opts.maxMatvecs,
      krylovSize: opts.krylovSize !== undefined ? Math.min(opts.krylovSize, sector.dim) : undefined,
      seed: opts.seed,
      initial,
      onProgress: onProgress
        ? (info) =>
            onProgress({ ...info, matvecs: tally.matvecs + info.matvecs, restarts: tally.restarts + info.restarts })
        : undefined,
    };
    const need = Math.min(states, sector.dim);
    const search: SectorSearch = {
      op,
      base,
      need,
      groundCopies: Math.max(need, Math.min(opts.groundCopies ?? states, sector.dim)),
      dimension: sector.dim,
      shared,
      tolerance: opts.tolerance,
      copies: plan.copies.length,
      tally,
    };
    const found =
      Number.isFinite(screenLine(shared, opts.tolerance)) && sector.dim > denseThresholdFor(need)
        ? screenSectorStates(search)
        : allSectorStates(search);
    const { energies, residuals, vectors, converged, method, groundComplete } = found;
    const { matvecs, restarts } = tally;
    if (found.screenedOut) {
      const run = {
        label: plan.label,
        dimension: sector.dim,
        method: 'lanczos' as const,
        iterations: matvecs,
        lowest: found.screenedAt,
        screened: true,
        copies: plan.copies,
        nonzeros: stored.nonzeros(),
      };
      return {
        run,
        states: { plan: index, energies: [], residuals: [], vectors: [], complex: isComplex },
        matvecs,
        restarts,
        converged: true,
        groundComplete: true,
      };
    }
    const bounds = shared.bounds();
    const run = {
      label: plan.label,
      dimension: sector.dim,
      method,
      iterations: matvecs,
      lowest: energies[0],
      screened: false,
      copies: plan.copies,
      nonzeros: stored.nonzeros(),
    };
    return {
      run,
      states: {
        plan: index,
        energies,
        residuals,
        // Only states that can still enter the answer keep their vectors (they are sector-sized).
        vectors: vectors.map((v, k) => (canMatter(energies[k], bounds, opts.tolerance) ? v : null)),
        complex: isComplex,
      },
      matvecs,
      restarts,
      converged,
      groundComplete,
    };
  } finally {
    shared.addMatvecs(tally.matvecs);
    op.close();
    if (arena && mark !== undefined) arena.release(mark);
  }
}

/** The warm start projected into the sector, unless it has (next to) no component there. */
function sectorStart(sector: SectorBasis, opts: SectorSolveOptions, isComplex: boolean): Float64Array | undefined {
  if (!opts.initial) return undefined;
  const c = sector.project(opts.initial, opts.initialComplex ?? false, isComplex);
  let n2 = 0;
  for (let k = 0; k < c.length; k++) n2 += c[k] * c[k];
  return n2 > 1e-12 ? c : undefined;
}

/** A new state must lie below this line to enter the answer (+Infinity while fewer than `states` are known). */
function screenLine(shared: SharedProgress, tolerance: number): number {
  const { ceiling } = shared.bounds();
  return ceiling + degeneracyWindow(ceiling, tolerance);
}

/** Products and restarts spent on one sector so far (its progress reports add them). */
interface SectorTally {
  matvecs: number;
  restarts: number;
}

/** What finding a sector's states works with. */
interface SectorSearch {
  op: HermitianOperator;
  /** The sector's eigensolver options (one state, its start vector, threads, progress). */
  base: EigenOptions;
  /** States wanted from the sector: `states`, at most its dimension. */
  need: number;
  /** Most copies of the sector's lowest level looked for while it may be the ground level. */
  groundCopies: number;
  dimension: number;
  shared: SharedProgress;
  tolerance: number;
  /** The sector's k <-> -k copies: each energy found counts this many times more. */
  copies: number;
  tally: SectorTally;
}

/** A sector's states as found, before the ones that cannot matter lose their vectors. */
interface SectorStatesFound {
  energies: number[];
  residuals: number[];
  vectors: Float64Array[];
  converged: boolean;
  method: 'dense' | 'lanczos';
  groundComplete: boolean;
  /** Nothing in the sector lies below the line: only its lowest value's upper bound was computed. */
  screenedOut: boolean;
  /** That upper bound (NaN otherwise). */
  screenedAt: number;
}

/**
 * Screens with the sector's lowest state, converged only as far as the decision needs (see
 * EigenOptions.screenAbove). A state not screened out is converged to the tolerance, and the next
 * one is looked for the same way, deflated against those found, so a sector costs only as many
 * states as can enter the answer.
 */
function screenSectorStates(search: SectorSearch): SectorStatesFound {
  const { op, base, need, groundCopies, dimension, shared, tolerance, copies, tally } = search;
  const energies: number[] = [];
  const residuals: number[] = [];
  const vectors: Float64Array[] = [];
  let converged = true;
  let method: 'dense' | 'lanczos' = 'lanczos';
  let groundComplete = true;
  let screenedAt = NaN;
  // Past `need`, copies of the sector's lowest level are looked for while it may be the
  // ground level: the answer's degeneracy and averages need every copy.
  const levelTop = (): number => energies[0] + degeneracyWindow(energies[0], tolerance);
  const extending = (): boolean => {
    if (energies.length < need || energies[energies.length - 1] > levelTop()) return false;
    const { ground } = shared.bounds();
    return energies[0] <= ground + degeneracyWindow(ground, tolerance);
  };
  while ((energies.length < need || extending()) && energies.length < dimension) {
    // At the cap, one more screen still tells a complete level from one with more copies.
    const atCap = energies.length >= groundCopies;
    const next = lowestEigenpairs(op, {
      ...base,
      initial: energies.length === 0 ? base.initial : undefined,
      deflate: vectors,
      verifyDegeneracy: false,
      screenAbove: energies.length < need ? screenLine(shared, tolerance) : levelTop(),
    });
    tally.matvecs += next.matvecs;
    tally.restarts += next.restarts;
    screenedAt = next.values[0];
    if (next.screened) break;
    // A further copy not converged leaves the level incomplete, the states found converged.
    if (energies.length >= need && !next.converged) {
      groundComplete = false;
      break;
    }
    if (next.method === 'dense') method = 'dense';
    converged &&= next.converged;
    const v = next.vectors[0];
    energies.push(next.values[0]);
    // Measured against H itself: the run's own residual is that of H with the found states
    // projected out, which those states' small residuals perturb.
    residuals.push(vectors.length === 0 ? next.residuals[0] : residualNorm(op, v, next.values[0]));
    if (vectors.length > 0) tally.matvecs++;
    converged &&= residuals[residuals.length - 1] <= tolerance;
    vectors.push(v);
    shared.publish([next.values[0]], copies);
    if (atCap) {
      groundComplete = next.values[0] > levelTop();
      break;
    }
  }
  const screenedOut = energies.length === 0;
  return { energies, residuals, vectors, converged, method, groundComplete, screenedOut, screenedAt };
}

/** The sector's lowest `need` states (and every copy of its lowest level, up to the cap) in one solve. */
function allSectorStates(search: SectorSearch): SectorStatesFound {
  const { op, base, need, groundCopies, shared, copies, tally } = search;
  const result = lowestEigenpairs(op, { ...base, states: need, groundCopies });
  tally.matvecs += result.matvecs;
  tally.restarts += result.restarts;
  const energies = Array.from(result.values);
  shared.publish(energies, copies);
  return {
    energies,
    residuals: Array.from(result.residuals),
    vectors: result.vectors,
    converged: result.converged,
    method: result.method,
    groundComplete: result.degeneracyComplete ?? false,
    screenedOut: false,
    screenedAt: NaN,
  };
}

/**
 * States on the full basis (interleaved complex), one vector per state: the ground space, or every
 * kept state (a copy follows its representative, as they share one energy). A k <-> -k copy
 * is its representative's state carried to -k by what pairs the two sectors (see planSectors):
 * complex conjugation for a real H, the chain reflection for a complex one. (Without the copy, the
 * entanglement of a complex H's degenerate +-k pair was that of one momentum state alone.)
 */
function expandGroundSpace(ground: Found[], model: Model, basis: PinnedBasis): Float64Array[] {
  const out: Float64Array[] = [];
  let actions: IndexActions | null = null;
  ground.forEach((g, k) => {
    if (k === 0 || g.vector !== ground[k - 1].vector) {
      if (!g.vector) throw new Error(`the vector of the state at energy ${g.energy} was dropped before expansion`);
      out.push(g.sector!.expand(g.vector, g.complex));
      return;
    }
    const psi = out[out.length - 1];
    const copy = new Float64Array(psi.length);
    if (!model.isComplex) {
      for (let t = 0; t < copy.length; t += 2) {
        copy[t] = psi[t];
        copy[t + 1] = -psi[t + 1];
      }
    } else {
      actions ??= new IndexActions(basis);
      for (let t = 0; t < basis.dim; t++) {
        const from = actions.reflect(t);
        copy[2 * t] = psi[2 * from];
        copy[2 * t + 1] = psi[2 * from + 1];
      }
    }
    out.push(copy);
  });
  return out;
}

/** Drops the vectors of states that can no longer enter the answer. */
function prune(outcomes: SectorOutcome[], shared: SharedProgress, tolerance: number): void {
  const bounds = shared.bounds();
  for (const o of outcomes) {
    o.states.vectors = o.states.vectors.map((v, k) =>
      v && canMatter(o.states.energies[k], bounds, tolerance) ? v : null,
    );
  }
}

/** Sectors with at least this many rows have their matrix built by two threads (rows split by their measured speeds). */
const SPLIT_BUILD_ROWS = 1 << 16;

interface BuildHelperData {
  mode: 'build';
  model: Model;
  basis: PinnedBasis;
  plans: SectorPlan[];
  maps: Record<string, OrbitMapParts>;
  /** Bumped by the helper after each answer it posts. */
  answered: Int32Array;
  port: MessagePort;
}

type BuildRequest = { plan: number; from: number; to: number };
type BuildAnswer =
  { kind: 'rows'; rows: BuiltRows; seconds: number } | { kind: 'error'; name: string; message: string };

/**
 * A thread that builds the later rows of a large sector while this thread builds the first ones:
 * sectors solved one at a time run their products on every core, but the build would otherwise
 * run on one (measured: a fifth of a 16x3 solve). Where the rows split follows the two threads'
 * measured speeds on the sector before, since the cores need not be equal (bench/cores.ts).
 */
class BuildHelper {
  private readonly worker: Worker;
  private readonly port: MessagePort;
  private readonly answered = new Int32Array(new SharedArrayBuffer(4));
  private seen = 0;
  /** This thread's share of the rows; the rest go to the helper. */
  private share = 0.5;

  constructor(model: Model, basis: PinnedBasis, plans: SectorPlan[], maps: Record<string, OrbitMapParts>) {
    const { port1, port2 } = new MessageChannel();
    const data: BuildHelperData = { mode: 'build', model, basis, plans, maps, answered: this.answered, port: port2 };
    this.worker = new Worker(workerScript('sectors'), { workerData: data, transferList: [port2] });
    this.worker.unref();
    this.port = port1;
  }

  /** The helper's rows (from `from` on): asked for before this thread starts on the rows before. */
  rowsFrom(plan: number, dim: number): { from: number; start: () => void; take: () => BuiltRows } {
    const from = Math.min(dim - 1, Math.max(1, Math.round(dim * this.share)));
    let started = 0;
    return {
      from,
      start: () => {
        started = performance.now();
        this.port.postMessage({ plan, from, to: dim } satisfies BuildRequest);
      },
      take: () => {
        const ownSeconds = (performance.now() - started) / 1000;
        let now;
        while ((now = Atomics.load(this.answered, 0)) === this.seen) Atomics.wait(this.answered, 0, now, 1000);
        this.seen = now;
        const answer = receiveMessageOnPort(this.port)?.message as BuildAnswer | undefined;
        if (!answer) throw new Error('the sector build thread answered without rows');
        if (answer.kind === 'error') throw errorFromThread(answer.name, answer.message, 'the sector build thread');
        this.share = splitShare(from / ownSeconds, (dim - from) / answer.seconds, this.share);
        return answer.rows;
      },
    };
  }

  close(): void {
    this.port.close();
    void this.worker.terminate();
  }
}

/**
 * This thread's share of the next build from the rows per second each thread managed on the last
 * one, so both finish together; kept within [0.2, 0.8] (a stall on either side must not hand it
 * all the rows), and unchanged when a time is unmeasurable.
 */
export function splitShare(ownRate: number, helperRate: number, previous: number): number {
  if (!(ownRate > 0 && helperRate > 0 && Number.isFinite(ownRate) && Number.isFinite(helperRate))) return previous;
  return Math.min(0.8, Math.max(0.2, ownRate / (ownRate + helperRate)));
}

/** What a thread posts of an error, for errorFromThread on the other side. */
function describe(e: unknown): { name: string; message: string } {
  return e instanceof Error ? { name: e.name, message: e.message } : { name: 'Error', message: String(e) };
}

/** The build helper's side: answer each request with the rows asked for. */
function serveBuilds(data: BuildHelperData): void {
  const maps = new OrbitMaps(data.model, data.basis, false, data.maps);
  data.port.on('message', (request: BuildRequest) => {
    try {
      const plan = data.plans[request.plan];
      const sector = new SectorBasis(maps.for(plan.label), plan.label);
      // Timed like the other thread's part: the rows alone, not the sector basis or the hand-over.
      const started = performance.now();
      const builder = new CsrBuilder(request.to - request.from, data.model.isComplex || sector.complexCharacters);
      buildSectorRows(data.model, data.basis, sector, request.from, request.to, builder);
      const seconds = (performance.now() - started) / 1000;
      const rows = builder.export();
      const buffers = new Set<ArrayBuffer>([rows.rowStart.buffer as ArrayBuffer]);
      for (const c of rows.chunks) for (const a of [c.columns, c.re, c.im]) if (a) buffers.add(a.buffer as ArrayBuffer);
      data.port.postMessage({ kind: 'rows', rows, seconds } satisfies BuildAnswer, [...buffers]);
    } catch (e) {
      data.port.postMessage({ kind: 'error', ...describe(e) } satisfies BuildAnswer);
    }
    Atomics.add(data.answered, 0, 1);
    Atomics.notify(data.answered, 0);
  });
}

/** Entry of workers/sectors.ts: a sector-solving helper, or a build helper. */
export function runSectorWorker(data: HelperData | BuildHelperData): void {
  if ('mode' in data && data.mode === 'build') serveBuilds(data);
  else runSectorHelper(data as HelperData);
}

/** A helper thread's loop: take sectors until none are left, post each outcome, then count itself done. */
export function runSectorHelper(data: HelperData): void {
  const shared = new SharedProgress(data.progress);
  try {
    const maps = new OrbitMaps(data.model, data.basis, false, data.maps);
    const arena = VectorArena.acquire();
    const context: SectorContext = {
      model: data.model,
      basis: data.basis,
      plans: data.plans,
      maps,
      opts: data.opts,
      shared,
      arena,
      spares: new ChunkSpares(),
      threadsFor: () => 1,
    };
    for (let i; (i = shared.claim()) < data.plans.length;) {
      const outcome = solveSector(context, i);
      if (!outcome) continue;
      const vectors = outcome.states.vectors.filter((v): v is Float64Array => v !== null);
      data.port.postMessage({ kind: 'sector', outcome } satisfies HelperMessage, [
        ...new Set(vectors.map((v) => v.buffer as ArrayBuffer)),
      ]);
    }
    arena?.recycle();
  } catch (e) {
    data.port.postMessage({ kind: 'error', ...describe(e) } satisfies HelperMessage);
  } finally {
    data.port.close();
    shared.helperDone();
  }
}

export function solveInSectors(
  model: Model,
  basis: PinnedBasis,
  use: Record<SymmetryName, boolean>,
  opts: SectorSolveOptions,
): SectorSolution {
  const selection = opts.selection ?? {};
  const sizes = translationSizes(model);
  (selection.momentum ?? []).forEach((m, i) => {
    if (!use.translation) throw new SpecError('solve.sector.momentum', 'this model has no translation symmetry');
    const at = `solve.sector.momentum[${i}]`;
    if (sizes === null) {
      if (typeof m !== 'number') throw new SpecError(at, `a chain's momentum is one number, got [${m.join(', ')}]`);
      if (m >= model.sites) throw new SpecError(at, `momentum index must be below ${model.sites}, got ${m}`);
      return;
    }
    const list = typeof m === 'number' ? [m] : m;
    if (list.length !== sizes.length)
      throw new SpecError(
        at,
        `a momentum has one entry per periodic direction (${sizes.length} here), got ${list.length}`,
      );
    list.forEach((x, d) => {
      if (x >= sizes[d])
        throw new SpecError(`${at}[${d}]`, `momentum index must be below ${sizes[d]} in direction ${d}, got ${x}`);
    });
  });
  if (selection.parity && !use.reflection)
    throw new SpecError('solve.sector.parity', 'this model has no reflection symmetry');
  if (selection.charge && !use.charge)
    throw new SpecError('solve.sector.charge', 'this model does not conserve the total level');
  if (selection.level_flip && !use.level_flip)
    throw new SpecError('solve.sector.level_flip', 'this model has no level-flip symmetry');
  if (selection.point_group) {
    const point = pointGroupInUse(use, model);
    for (const [name, values] of Object.entries(selection.point_group)) {
      const at = `solve.sector.point_group.${name}`;
      const g = point ? point.names.indexOf(name) : -1;
      if (!point || g < 0)
        throw new SpecError(
          at,
          point
            ? `the point group in use has the generators ${point.names.join(', ')}, not ${name}`
            : 'this solve uses no point group or automorphism',
        );
      const order = point.orders[g];
      values.forEach((v, i) => {
        const ok = order === 2 ? v === 1 || v === -1 : v >= 0 && v < order;
        if (!ok)
          throw new SpecError(
            values.length > 1 ? `${at}[${i}]` : at,
            order === 2 ? `expected +1 or -1, got ${v}` : `expected 0 .. ${order - 1} (order ${order}), got ${v}`,
          );
      });
    }
  }

  const plans = planSectors(use, model, selection).sort(sectorOrder(model));
  const states = opts.states;
  const helpers = Math.max(0, Math.min(opts.sectorThreads ?? 1, plans.length) - 1);
  // One at a time with threaded products: large sectors get a second thread for their build.
  const splitBuilds =
    helpers === 0 &&
    (opts.threadsFor?.(Number.MAX_SAFE_INTEGER) ?? 1) > 1 &&
    basis.dim >= (opts.splitBuildRows ?? SPLIT_BUILD_ROWS);
  const maps = new OrbitMaps(model, basis, helpers > 0 || splitBuilds);
  let builds: BuildHelper | null = null;
  // One team of kernel helpers and one of product helpers for every sector solved here on more
  // than one thread, lent to each solve.
  let kernelTeams: KeptTeam<KernelTeam> | null = null;
  const productTeams = new KeptTeam((threads) => ProductTeam.start(threads));
  const shared = SharedProgress.create(states);
  const outcomes: SectorOutcome[] = [];
  const started: Worker[] = [];
  const channels: MessagePort[] = [];
  try {
    if (helpers > 0) {
      // Every map the sectors use exists before the helpers start, so they share it.
      for (const plan of plans) maps.for(plan.label);
      const {
        initial,
        initialComplex,
        states: s,
        tolerance,
        maxMatvecs,
        krylovSize,
        seed,
        selection: sel,
        groundCopies,
      } = opts;
      const script = workerScript('sectors');
      for (let h = 0; h < helpers; h++) {
        const { port1, port2 } = new MessageChannel();
        const data: HelperData = {
          model,
          basis,
          plans,
          opts: {
            initial,
            initialComplex,
            states: s,
            tolerance,
            maxMatvecs,
            krylovSize,
            seed,
            selection: sel,
            groundCopies,
          },
          maps: maps.parts(),
          progress: { words: shared.words, lowest: shared.lowest },
          port: port2,
        };
        const worker = new Worker(script, { workerData: data, transferList: [port2] });
        worker.unref();
        started.push(worker);
        channels.push(port1);
      }
    }
    if (splitBuilds) {
      for (const plan of plans) maps.for(plan.label);
      builds = new BuildHelper(model, basis, plans, maps.parts());
    }
    // This thread takes sectors too; with helpers, each product runs on one thread.
    const threadsFor = helpers > 0 ? () => 1 : (opts.threadsFor ?? (() => 1));
    // Progress names the sector this thread works on and the share of the space in the sectors
    // taken before it, from exact sizes counted only when someone listens.
    const sizes = opts.onProgress ? sectorDimensionsByKey(model, use, selection) : null;
    const totalDimension = plans.reduce((sum, p) => sum + (sizes?.get(labelKey(p.label)) ?? 0), 0);
    const onProgressIn = (i: number) => {
      const report = opts.onProgress;
      if (!report || !sizes) return undefined;
      const before = plans.slice(0, i).reduce((sum, p) => sum + (sizes.get(labelKey(p.label)) ?? 0), 0);
      const sector = (): SectorProgress => ({
        index: Math.min(shared.claimed(), plans.length),
        count: plans.length,
        label: plans[i].label,
        dimension: sizes.get(labelKey(plans[i].label)) ?? 0,
        spaceBefore: totalDimension > 0 ? before / totalDimension : 0,
      });
      return (info: Parameters<NonNullable<EigenOptions['onProgress']>>[0]) =>
        report({ ...info, matvecs: shared.matvecs() + info.matvecs, sector: sector() });
    };
    const arena = VectorArena.acquire();
    const kernels = new KeptTeam((threads) => (arena ? KernelTeam.start(arena, threads) : null));
    kernelTeams = kernels;
    const context: SectorContext = {
      model,
      basis,
      plans,
      maps,
      opts,
      shared,
      arena,
      spares: new ChunkSpares(),
      threadsFor,
      progressFor: onProgressIn,
      builds,
      teamFor: (t) => kernels.for(t),
      productTeamFor: (t) => productTeams.for(t),
    };
    for (let i; (i = shared.claim()) < plans.length;) {
      const outcome = solveSector(context, i);
      if (outcome) outcomes.push(outcome);
      prune(outcomes, shared, opts.tolerance);
    }
    // Every kept vector is a copy outside it, so the next solve on this thread may reuse it.
    arena?.recycle();
    if (helpers > 0) {
      shared.waitForHelpers(helpers);
      for (const port of channels) {
        for (let m; (m = receiveMessageOnPort(port));) {
          const message = m.message as HelperMessage;
          if (message.kind === 'error') throw errorFromThread(message.name, message.message, 'a sector thread');
          outcomes.push(message.outcome);
        }
      }
      prune(outcomes, shared, opts.tolerance);
    }
  } finally {
    for (const port of channels) port.close();
    for (const worker of started) void worker.terminate();
    builds?.close();
    kernelTeams?.close();
    productTeams.close();
  }

  // Runs in the order of the plan, whichever thread solved them.
  outcomes.sort((a, b) => a.states.plan - b.states.plan);
  let found: Found[] = [];
  let matvecs = 0;
  let restarts = 0;
  let converged = true;
  for (const o of outcomes) {
    matvecs += o.matvecs;
    restarts += o.restarts;
    converged &&= o.converged;
    const plan = plans[o.states.plan];
    const { energies, residuals, vectors, complex } = o.states;
    if (energies.length === 0) continue;
    const sector = new SectorBasis(maps.for(plan.label), plan.label);
    for (let k = 0; k < energies.length; k++) {
      const entry = { energy: energies[k], residual: residuals[k], sector, vector: vectors[k], complex };
      found.push({ ...entry, label: plan.label });
      for (const copy of plan.copies) found.push({ ...entry, label: copy });
    }
  }
  const runs = outcomes.map((o) => o.run);
  const anyLanczos = runs.some((r) => r.method === 'lanczos');
  found.sort((a, b) => a.energy - b.energy);
  if (found.length === 0) throw new SpecError('solve.sector', 'the selected sectors contain no states');
  // The lowest `states` and anything degenerate with the ground level.
  const e0 = found[0].energy;
  const window = degeneracyWindow(e0, opts.tolerance);
  found = found.filter((f, k) => k < states || f.energy - e0 <= window);
  const ground = found.filter((f) => f.energy - e0 <= window);
  // Only sectors holding the ground level need all its copies.
  const degeneracyComplete = outcomes.every(
    (o) => o.groundComplete || o.states.energies.length === 0 || o.states.energies[0] - e0 > window,
  );
  // Copies (k <-> -k) share their representative's probabilities for these diagonal observables:
  // complex conjugation leaves |psi|^2 unchanged, and a reflected translation-invariant state has
  // the same populations, spreads, pair separations and string width.
  const probabilities = new Float64Array(basis.dim);
  for (const g of ground) g.sector!.accumulateProbabilities(g.vector!, g.complex, 1 / ground.length, probabilities);
  // Full-space vectors of a level with more copies than the cap would not fit in memory.
  const groundStates =
    opts.expandGround && ground.length <= Math.max(states, opts.groundCopies ?? states)
      ? expandGroundSpace(ground, model, basis)
      : [];
  const answer = found.slice(0, states);
  const allStates = opts.expandAll
    ? {
        vectors: expandGroundSpace(found, model, basis),
        energies: found.map((f) => f.energy),
        labels: found.map((f) => f.label),
      }
    : undefined;
  const kept = found;
  const eachState: KeptSectorStates | undefined = opts.eachState
    ? {
        energies: kept.map((f) => f.energy),
        labels: kept.map((f) => f.label),
        accumulateProbabilities(members: number[], out: Float64Array): void {
          for (const m of members) {
            const f = kept[m];
            if (!f.vector)
              throw new Error(`the vector of the state at energy ${f.energy} was dropped before its observables`);
            f.sector!.accumulateProbabilities(f.vector, f.complex, 1 / members.length, out);
          }
        },
      }
    : undefined;
  return {
    energies: answer.map((f) => f.energy),
    labels: answer.map((f) => f.label),
    residuals: answer.map((f) => f.residual),
    converged,
    matvecs,
    restarts,
    degeneracy: ground.length,
    degeneracyComplete,
    runs,
    groundProbabilities: probabilities,
    groundStates,
    allStates,
    eachState,
    method: anyLanczos ? 'lanczos' : 'dense',
  };
}
