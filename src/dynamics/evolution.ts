// Quench dynamics: the [evolve] section, and psi(t) = exp(-i H t) psi(0) recorded at chosen times.
//
//   key                    default        meaning
//   ---------------------  -------------  ---------------------------------------------------------
//   evolve.initial         every site in level 0
//                          [n_0, n_1, ...]                    one level per site (-1: an empty site,
//                                                             itinerant kinds)
//                          { levels = [...], pulses = [...] } product of per-site superpositions:
//                              each pulse { between = [a, b], area, phase = 0, sites = all } is a
//                              resonant Rabi rotation of the given area (pi: full transfer)
//                          { ground_state = { "key.path" = value, ... } }  ground state of the spec
//                              with those keys changed (a quench); ramped keys start at their `from`
//   evolve.times           required       [t...] ascending, or { from = 0, to, steps } (steps+1 times)
//   evolve.time_unit       "model"        "model" (hbar/energy unit) or "ms" (needs [units])
//   evolve.tolerance       1e-8           bound on the 2-norm error of the state at every recorded time
//   evolve.krylov          30             Krylov subspace size m (memory: m+1 state vectors)
//   evolve.ramp            none           { key, from, to, duration, start = 0, steps = 100 } or a list:
//                                          the key moves linearly from `from` to `to` over
//                                          [start, start+duration] in `steps` constant pieces (each
//                                          piece uses the value at its midpoint); before it the key
//                                          is `from`, after it `to`. Times in time_unit.
//
// The Hamiltonian is piecewise constant; within a piece the state is propagated by Krylov steps
// (src/dynamics/krylov.ts) whose lengths follow from the tolerance. At each recorded time the
// observables of docs/model.md are taken from the state, with the norm, the return probability
// |<psi(0)|psi(t)>|^2, the energy <psi|H(t)|psi> and, with a ramp, the weight of the state in the
// ground space of the instantaneous H(t) (keys at their exact linear value at t, not the piece value).

import { basisDimension, buildBasis, type Basis } from '../basis/basis.js';
import { ConvergenceError, SpecError } from '../errors/errors.js';
import { buildModel, type Model } from '../model/model.js';
import { buildOperator } from '../operator/build.js';
import type { HermitianOperator } from '../operator/hermitian.js';
import { planFockOperator } from '../operator/fock.js';
import { basisProbabilities, pinnedObservables, type Observables } from '../observables/pinned.js';
import { itinerantObservables } from '../observables/itinerant.js';
import { TRACE_OBSERVABLES } from '../observables/catalogue.js';
import {
  assertWithinMemory,
  defaultMemoryLimit,
  RUNTIME_BASELINE_BYTES,
  type MemoryEstimate,
} from '../point/memory.js';
import { defaultKrylovSize, GROUND_COPIES_CAP, lowestEigenpairs } from '../solver/eigensolver.js';
import { solveSettings } from '../solver/specSettings.js';
import { applyOverride, validateSpec, type Spec } from '../spec/spec.js';
import { labUnits } from '../spec/units.js';
import { cutText, isTable, keyForPath } from '../spec/validate.js';
import {
  complexDot,
  complexView,
  expectation,
  KrylovPropagator,
  toComplex,
  vectorNorm,
  type ComplexOperator,
} from './krylov.js';
import { productState, siteAmplitudes } from './initialState.js';
import type { EvolveSection, Ramp } from '../spec/evolveSection.js';

// ---------------------------------------------------------------------------------------------
// Planning: everything sized and checked before anything large is allocated

/** A stretch of time with one constant Hamiltonian. */
export interface Piece {
  start: number;
  end: number;
  /** Ramped key values in force on this piece (midpoint values). */
  values: number[];
}

export interface EvolutionPlan {
  raw: Record<string, unknown>;
  spec: Spec;
  section: EvolveSection;
  model: Model;
  dimension: number;
  /** Recorded times in model units. */
  times: number[];
  /** Recorded times in ms when the spec has [units]. */
  timesMs: number[] | null;
  /** Ramps with start and duration in model units. */
  ramps: Ramp[];
  pieces: Piece[];
  /** The spec whose ground state is the initial state (initial = ground_state), else null. */
  initialSpec: Spec | null;
  memory: MemoryEstimate;
}

/** Spec of the same model with the ramped keys (and any further changes) set; `path` names the source in errors. */
function specWith(
  raw: Record<string, unknown>,
  base: Spec,
  assignments: [string, unknown][],
  blame: (key: string, index: number) => string,
): Spec {
  const clone = structuredClone(raw);
  delete clone.evolve;
  // Keep one energy unit through a ramp of a [units] key, or model times would change meaning.
  const units = labUnits(base);
  if (units !== null && isTable(clone.units)) clone.units.energy_unit_hz = units.energyUnitHz;
  assignments.forEach(([key, value], index) => {
    try {
      applyOverride(clone, `${key}=${JSON.stringify(value)}`);
    } catch (e) {
      if (e instanceof SpecError || e instanceof Error)
        throw new SpecError(blame(key, index), `cannot set ${cutText(key)}: ${e.message}`);
      throw e;
    }
  });
  try {
    return validateSpec(clone);
  } catch (e) {
    if (!(e instanceof SpecError) || assignments.length === 0) throw e;
    // Blame the assignment the error is about (levels.tunnelling for levels.tunnelling[1]), else the first.
    const culprit = Math.max(
      0,
      assignments.findIndex(
        ([key]) => e.keyPath === key || e.keyPath.startsWith(`${key}[`) || e.keyPath.startsWith(`${key}.`),
      ),
    );
    const setting = assignments.map(([k, v]) => `${cutText(k)} = ${cutText(JSON.stringify(v))}`).join(', ');
    throw new SpecError(blame(assignments[culprit][0], culprit), `with ${setting}: ${e.message}`);
  }
}

function rampValue(ramp: Ramp, t: number): number {
  if (t <= ramp.start) return ramp.from;
  if (t >= ramp.start + ramp.duration) return ramp.to;
  return ramp.from + ((ramp.to - ramp.from) * (t - ramp.start)) / ramp.duration;
}

/** The evolve section of a spec, or a SpecError saying it is needed. */
export function evolveSection(spec: Spec): EvolveSection {
  const section = spec.extra.evolve as EvolveSection | undefined;
  if (section === undefined)
    throw new SpecError('evolve', 'required section is missing: rungchain evolve needs at least evolve.times');
  return section;
}

/** Sizes a trace and checks every key it will change, allocating nothing large. */
export function planEvolution(raw: Record<string, unknown>, spec: Spec): EvolutionPlan {
  const section = evolveSection(spec);
  const model = buildModel(spec);
  const dimension = basisDimension(model);
  const units = labUnits(spec);
  const toModel =
    section.timeUnit === 'ms' ? (t: number) => t / (units as NonNullable<typeof units>).timeUnitMs : (t: number) => t;
  const times = section.times.map(toModel);
  const timesMs = units === null ? null : times.map((t) => t * units.timeUnitMs);
  const ramps = section.ramps.map((r) => ({ ...r, start: toModel(r.start), duration: toModel(r.duration) }));

  // Every ramped key must take both end values, and keep the basis: check the ends now.
  for (const ramp of ramps) {
    for (const end of [ramp.from, ramp.to]) {
      const s = specWith(raw, spec, [[ramp.key, end]], () => `${ramp.path}.key`);
      const m = buildModel(s);
      if (m.kind !== model.kind || basisDimension(m) !== dimension) {
        throw new SpecError(
          `${ramp.path}.key`,
          `${cutText(ramp.key)} changes the basis (dimension ${dimension} -> ${basisDimension(m)}); a ramp may only move couplings`,
        );
      }
    }
  }

  // The spec whose ground state starts the trace: ramped keys at their start, then the listed changes.
  let initialSpec: Spec | null = null;
  if (section.initial.kind === 'ground_state') {
    const assignments: [string, unknown][] = [
      ...ramps.map((r): [string, unknown] => [r.key, r.from]),
      ...section.initial.changes,
    ];
    initialSpec = specWith(raw, spec, assignments, (key, index) =>
      index < ramps.length ? `${ramps[index].path}.from` : `evolve.initial.ground_state.${keyForPath(key)}`,
    );
    const m = buildModel(initialSpec);
    if (m.kind !== model.kind || basisDimension(m) !== dimension) {
      throw new SpecError(
        'evolve.initial.ground_state',
        `the changed keys change the basis (dimension ${dimension} -> ${basisDimension(m)}); a quench may only change couplings`,
      );
    }
  }

  const end = times[times.length - 1];
  const cuts = new Set<number>([0, end]);
  for (const ramp of ramps) {
    for (let k = 0; k <= ramp.steps; k++) {
      const c = ramp.start + (ramp.duration * k) / ramp.steps;
      if (c > 0 && c < end) cuts.add(c);
    }
  }
  const sorted = [...cuts].sort((a, b) => a - b);
  const pieces: Piece[] = [];
  for (let k = 0; k + 1 < sorted.length; k++) {
    const [a, b] = [sorted[k], sorted[k + 1]];
    // Cuts closer than rounding would make empty pieces.
    if (b - a <= 1e-12 * Math.max(1, end)) continue;
    const mid = (a + b) / 2;
    pieces.push({ start: a, end: b, values: ramps.map((r) => rampValue(r, mid)) });
  }

  const vector = 2 * dimension * 8;
  // Pinned operators hold their diagonal; itinerant ones a stored matrix of known size.
  const operatorBytes = model.kind === 'pinned' ? dimension * 8 : planFockOperator(model, dimension).bytes;
  const parts: Record<string, number> = {
    runtime: RUNTIME_BASELINE_BYTES,
    // The piece's and the instantaneous operator (both alive during a ramp), and the real-to-complex adapter's scratch.
    operator: (ramps.length > 0 ? 2 : 1) * operatorBytes + 4 * dimension * 8,
    krylov: (Math.min(section.krylov, dimension) + 1) * vector,
    states: 4 * vector,
    observables: dimension * 8,
  };
  if (ramps.length > 0 || section.initial.kind === 'ground_state') {
    // The ground-state solves take solve.krylov like any other (see solveSettings).
    parts.ground = (Math.min(spec.solve.krylov ?? defaultKrylovSize(2), dimension) + 3 + 2) * vector;
  }
  let totalBytes = 0;
  for (const v of Object.values(parts)) totalBytes += v;
  return {
    raw,
    spec,
    section,
    model,
    dimension,
    times,
    timesMs,
    ramps,
    pieces,
    initialSpec,
    memory: { totalBytes, parts },
  };
}

// ---------------------------------------------------------------------------------------------
// Running

export interface TraceObservables extends Observables {
  return_probability: number;
  energy: number;
  norm: number;
  /** Weight of the state in the ground space of H(t); ramps only. */
  ground_overlap?: number;
}

export interface EvolutionFrame {
  index: number;
  /** Model time. */
  time: number;
  observables: TraceObservables;
  /** Accumulated a posteriori bound on the state error at this time. */
  error_bound: number;
  /** Matrix-vector products so far (propagation, energies and ground states). */
  matvecs: number;
}

/** Where a resumed trace picks up: the state at `time`, and what the earlier part already used. */
export interface EvolutionCheckpoint {
  /** Index of the next frame to record. */
  nextFrame: number;
  time: number;
  psi: Float64Array;
  psi0: Float64Array;
  errorBound: number;
  matvecs: number;
  steps: number;
}

export interface EvolveOptions {
  maxMemory?: number;
  /** How the user sets `maxMemory` (the command line's flag), named when the evolution is over it. */
  memoryLimitName?: string;
  /** Called for every recorded frame, in order; `state` is psi at that time (do not keep a reference). */
  onFrame?: (frame: EvolutionFrame, state: Float64Array) => void;
  /** Called after every Krylov step with how far the trace has come. */
  onProgress?: (info: { time: number; end: number; matvecs: number }) => void;
  /** Start from a saved state instead of t = 0. */
  resume?: EvolutionCheckpoint;
}

export interface EvolutionResult {
  times: number[];
  timesMs: number[] | null;
  frames: EvolutionFrame[];
  stats: {
    dimension: number;
    krylov: number;
    tolerance: number;
    steps: number;
    matvecs: number;
    error_bound: number;
    seconds: number;
  };
  /** Things the user should know (a degenerate initial ground state, ...). */
  notes: string[];
}

interface BuiltHamiltonian {
  op: HermitianOperator;
  complex: ComplexOperator;
}

/** Probability of `psi` (complex) in the span of orthonormal `vectors` (real or complex). */
function weightInSpan(vectors: Float64Array[], psi: Float64Array, dim: number): number {
  let total = 0;
  for (const g of vectors) {
    const c = complexDot(toComplex(g, dim), psi);
    total += c.re * c.re + c.im * c.im;
  }
  return total;
}

function stateObservables(basis: Basis, psi: Float64Array, periodic: boolean): Observables {
  if (basis.kind === 'pinned') return pinnedObservables(basis, basisProbabilities([psi], basis.dim, true));
  return itinerantObservables(basis, [psi], true, periodic);
}

/** The initial state of a plan, normalized, interleaved complex. */
export function initialState(plan: EvolutionPlan, basis: Basis, notes: string[] = []): Float64Array {
  const { spec, section } = plan;
  const initial = section.initial;
  if (initial.kind === 'levels') {
    const L = spec.chain.sites;
    const N = spec.levels.count;
    const levels = initial.levels ?? new Array<number>(L).fill(0);
    return productState(
      basis,
      levels.map((n, i) => (n < 0 ? null : siteAmplitudes(N, n, initial.pulses, i))),
    );
  }
  const groundSpec = plan.initialSpec as Spec;
  const op = buildOperator(buildModel(groundSpec), basis);
  const eigen = lowestEigenpairs(op, {
    states: Math.min(2, basis.dim),
    ...solveSettings(groundSpec.solve),
    throwOnFailure: true,
    groundCopies: GROUND_COPIES_CAP,
  });
  if (eigen.degeneracy > 1) {
    const fold = eigen.degeneracyComplete ? `${eigen.degeneracy}-fold` : `at least ${eigen.degeneracy}-fold`;
    notes.push(`the initial ground state is ${fold} degenerate; the trace starts from one vector of that space`);
  }
  const psi = toComplex(eigen.vectors[0], basis.dim);
  const n = vectorNorm(psi);
  for (let k = 0; k < psi.length; k++) psi[k] /= n;
  return psi;
}

/**
 * A trace in progress, advanced one Krylov step at a time so a caller can interleave other work
 * (signals, checkpoints, progress) between steps.
 */
export class Evolution {
  readonly plan: EvolutionPlan;
  readonly basis: Basis;
  readonly notes: string[] = [];
  readonly frames: EvolutionFrame[] = [];
  /** Model time the state `psi` belongs to. */
  time: number;
  /** Index of the next frame to record. */
  nextFrame: number;
  errorBound: number;
  steps: number;
  private readonly options: EvolveOptions;
  private readonly started = performance.now();
  private readonly dim: number;
  private readonly psi0: Float64Array;
  private readonly psi: Float64Array;
  private readonly out: Float64Array;
  private readonly scratch: Float64Array;
  private readonly rate: number;
  private readonly eps: number;
  private readonly end: number;
  private readonly matvecsBefore: number;
  private readonly hamiltonians = new Map<string, BuiltHamiltonian>();
  private ground: { key: string; vectors: Float64Array[] } | null = null;
  private extraMatvecs = 0;
  private finishedPieceMatvecs = 0;
  private pieceIndex = 0;
  private propagator: KrylovPropagator | null = null;

  constructor(plan: EvolutionPlan, options: EvolveOptions = {}) {
    assertWithinMemory(
      plan.memory,
      options.maxMemory ?? defaultMemoryLimit(),
      'this time evolution',
      options.memoryLimitName,
    );
    this.plan = plan;
    this.options = options;
    this.basis = buildBasis(plan.model);
    this.dim = this.basis.dim;
    const { times, section } = plan;
    this.end = times[times.length - 1];
    // Errors of successive steps add up (unitary propagation keeps them), so each may use its share;
    // half the tolerance leaves room for the quadrature of the bound and for rounding.
    this.rate = (0.5 * section.tolerance) / Math.max(this.end, Number.MIN_VALUE);
    // A time this close to a cut counts as on it (times and cuts are sums of decimals).
    this.eps = 1e-12 * Math.max(1, this.end);
    const resume = options.resume;
    if (resume && resume.psi.length !== 2 * this.dim) {
      throw new ConvergenceError(
        `cannot resume: the saved state has ${resume.psi.length / 2} amplitudes, the basis ${this.dim}`,
      );
    }
    this.psi0 = resume ? Float64Array.from(resume.psi0) : initialState(plan, this.basis, this.notes);
    this.psi = resume ? Float64Array.from(resume.psi) : Float64Array.from(this.psi0);
    this.time = resume ? resume.time : 0;
    this.nextFrame = resume ? resume.nextFrame : 0;
    this.errorBound = resume ? resume.errorBound : 0;
    this.steps = resume ? resume.steps : 0;
    this.matvecsBefore = resume ? resume.matvecs : 0;
    this.out = new Float64Array(2 * this.dim);
    this.scratch = new Float64Array(2 * this.dim);
    if (this.nextFrame < times.length && times[this.nextFrame] <= this.time + this.eps) {
      this.record(times[this.nextFrame], this.psi, this.errorBound);
    }
    while (this.pieceIndex < plan.pieces.length && plan.pieces[this.pieceIndex].end <= this.time + this.eps)
      this.pieceIndex++;
  }

  get done(): boolean {
    return this.nextFrame >= this.plan.times.length;
  }

  get matvecs(): number {
    return this.matvecsBefore + this.finishedPieceMatvecs + (this.propagator?.matvecs ?? 0) + this.extraMatvecs;
  }

  /** What a resume from the current time needs (references to live vectors: copy or write them out before advancing). */
  checkpoint(): EvolutionCheckpoint {
    return {
      nextFrame: this.nextFrame,
      time: this.time,
      psi: this.psi,
      psi0: this.psi0,
      errorBound: this.errorBound,
      matvecs: this.matvecs,
      steps: this.steps,
    };
  }

  /** One Krylov step (recording every frame it passes). */
  advance(): void {
    if (this.done) return;
    const pieces = this.plan.pieces;
    if (this.pieceIndex >= pieces.length) {
      // Only reachable through rounding in the cut arithmetic; say so rather than return a short trace.
      throw new ConvergenceError(
        `time evolution stopped at t = ${this.time} before the recorded time ${this.plan.times[this.nextFrame]}`,
      );
    }
    const piece = pieces[this.pieceIndex];
    if (this.propagator === null) {
      this.propagator = new KrylovPropagator(this.hamiltonianFor(piece.values).complex, this.plan.section.krylov);
    }
    const t = this.time;
    const step = this.propagator.step(this.psi, piece.end - t, this.rate);
    this.steps++;
    const stepEnd = piece.end - (t + step.tau) <= this.eps ? piece.end : t + step.tau;
    const times = this.plan.times;
    while (this.nextFrame < times.length && times[this.nextFrame] <= stepEnd + this.eps) {
      step.evaluate(Math.min(Math.max(times[this.nextFrame] - t, 0), step.tau), this.out);
      this.record(times[this.nextFrame], this.out, this.errorBound + step.errorBound);
    }
    step.evaluate(stepEnd - t, this.psi);
    this.errorBound += step.errorBound;
    this.time = stepEnd;
    if (stepEnd >= piece.end) {
      this.finishedPieceMatvecs += this.propagator.matvecs;
      this.propagator = null;
      this.pieceIndex++;
    }
    this.options.onProgress?.({ time: this.time, end: this.end, matvecs: this.matvecs });
  }

  result(): EvolutionResult {
    return {
      times: this.plan.times,
      timesMs: this.plan.timesMs,
      frames: this.frames,
      stats: {
        dimension: this.dim,
        krylov: Math.min(this.plan.section.krylov, this.dim),
        tolerance: this.plan.section.tolerance,
        steps: this.steps,
        matvecs: this.matvecs,
        error_bound: this.errorBound,
        seconds: (performance.now() - this.started) / 1000,
      },
      notes: this.notes,
    };
  }

  /** Hamiltonians by ramp values; a few are kept (the current piece's and the instantaneous one). */
  private hamiltonianFor(values: number[]): BuiltHamiltonian {
    const key = JSON.stringify(values);
    let h = this.hamiltonians.get(key);
    if (!h) {
      const { plan } = this;
      const ramps = plan.ramps;
      const model =
        ramps.length === 0
          ? plan.model
          : buildModel(
              specWith(
                plan.raw,
                plan.spec,
                ramps.map((r, k) => [r.key, values[k]]),
                (_key, k) => `${ramps[k].path}.key`,
              ),
            );
      const op = buildOperator(model, this.basis);
      h = { op, complex: complexView(op) };
      if (this.hamiltonians.size >= 2) this.hamiltonians.delete(this.hamiltonians.keys().next().value as string);
      this.hamiltonians.set(key, h);
    }
    return h;
  }

  private groundSpace(values: number[], h: BuiltHamiltonian): Float64Array[] {
    const key = JSON.stringify(values);
    if (this.ground?.key === key) return this.ground.vectors;
    const spec = this.plan.spec;
    const warm = this.ground?.vectors[0];
    const eigen = lowestEigenpairs(h.op, {
      states: Math.min(2, this.dim),
      ...solveSettings(spec.solve),
      initial: warm && warm.length === (h.op.isComplex ? 2 * this.dim : this.dim) ? warm : undefined,
      throwOnFailure: true,
      // The weight in the ground space needs every copy of the level, not the first two.
      groundCopies: GROUND_COPIES_CAP,
    });
    this.extraMatvecs += eigen.matvecs;
    this.ground = { key, vectors: eigen.vectors.slice(0, eigen.degeneracy) };
    return this.ground.vectors;
  }

  private record(time: number, state: Float64Array, bound: number): void {
    const ramps = this.plan.ramps;
    const values = ramps.map((r) => rampValue(r, time));
    const h = this.hamiltonianFor(values);
    const energy = expectation(h.complex, state, this.scratch);
    this.extraMatvecs++;
    const overlap = complexDot(this.psi0, state);
    const observables: TraceObservables = {
      ...stateObservables(this.basis, state, this.plan.model.chainPeriodic),
      return_probability: overlap.re * overlap.re + overlap.im * overlap.im,
      energy,
      norm: vectorNorm(state),
    };
    if (ramps.length > 0) observables.ground_overlap = weightInSpan(this.groundSpace(values, h), state, this.dim);
    const frame: EvolutionFrame = {
      index: this.nextFrame,
      time,
      observables,
      error_bound: bound,
      matvecs: this.matvecs,
    };
    this.frames.push(frame);
    this.nextFrame++;
    this.options.onFrame?.(frame, state);
  }
}

/** Runs a planned trace to the end; frames go to `onFrame` as they are recorded and are returned at the end. */
export function runEvolution(plan: EvolutionPlan, options: EvolveOptions = {}): EvolutionResult {
  const evolution = new Evolution(plan, options);
  while (!evolution.done) evolution.advance();
  return evolution.result();
}

// ---------------------------------------------------------------------------------------------
// Output

/** `{ name: [time]... }` over the frames: the observables of every trace, then those of some traces when the frames have them. */
export function timeFirstObservables(frames: readonly { observables: object }[]): Record<string, unknown[]> {
  const rows = frames.map((f) => f.observables as Record<string, unknown>);
  const observables: Record<string, unknown[]> = {};
  for (const key of TRACE_OBSERVABLES.always) observables[key] = rows.map((o) => o[key]);
  for (const key of TRACE_OBSERVABLES.sometimes) {
    if (rows.some((o) => o[key] !== undefined)) observables[key] = rows.map((o) => o[key]);
  }
  return observables;
}

/** `{ times, observables: { name: [time]... } }`, each observable indexed by time first. */
export function traceJson(result: EvolutionResult): { times: number[]; observables: Record<string, unknown[]> } {
  return { times: result.times, observables: timeFirstObservables(result.frames) };
}
