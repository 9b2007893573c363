// The work of one scan task, run inside a worker thread: a run of neighbouring points on one
// line, solved in order, each starting Lanczos from the previous ground state when the basis is
// the same. Every finished point is posted at once on the task's port, so the main thread writes
// it to disk before the next point starts; a worker that dies loses only the point it was on.

import type { MessagePort } from 'node:worker_threads';
import { threadId } from 'node:worker_threads';
import { isRungchainError } from '../errors/errors.js';
import { claimNext } from './claims.js';
import { planPoint, solvePoint } from '../point/solvePoint.js';
import { prepareSpectrum, spectrumOfSolved } from '../spectrum/spectrum.js';
import { validateSpec, type Spec } from '../spec/spec.js';
import type { ScanParams } from './plan.js';
import type { ScanRecord } from './record.js';
import { REALIZATION_KEY } from '../spec/disorder.js';
import { groundSpaceOverlap } from '../observables/overlap.js';

export interface TaskPoint {
  index: number;
  params: ScanParams;
  raw: Record<string, unknown>;
}

export interface ScanTask {
  points: TaskPoint[];
  /**
   * The point just before points[0] on its line, when it runs elsewhere (another task, or an earlier
   * run): solved first and not recorded, so the first point too gets its overlap (the fidelity
   * between neighbours is what transition indicators need) and a warm start.
   */
  leadIn?: TaskPoint;
  maxMemory: number;
  /** How the user sets `maxMemory` (the command line's flag), named in a failed point's error. */
  memoryLimitName?: string;
  warmStart: boolean;
  /** Most threads one product may use: the cores this worker's share allows (see chooseParallelism). */
  threads?: number;
  /** Shared claims (see newClaims): the worker takes points through them, so the main thread can hand the unstarted tail to an idle worker. */
  claims?: Int32Array;
  port: MessagePort;
}

export type TaskMessage = { kind: 'start'; index: number } | { kind: 'record'; record: ScanRecord };

/**
 * Fault injection, for tests only: tests/support/faults.mjs installs hooks through setScanTaskHooks
 * so tests can make a worker exit abruptly, a point slow, or a point outgrow its memory ceiling.
 * Nothing else sets them.
 */
export interface ScanTaskHooks {
  /** Called once the point's start is posted, before its clock starts. */
  pointStarting?(index: number): void;
  /** Called once the point's record is made, before it is posted. */
  pointFinished?(index: number): void;
}

let hooks: ScanTaskHooks = {};

/** Installs the fault-injection hooks of this thread's scan tasks (tests only). */
export function setScanTaskHooks(next: ScanTaskHooks): void {
  hooks = next;
}

/** A key telling whether two points share a basis (same states in the same order and arithmetic). */
function basisKey(spec: Spec, isComplex: boolean, dimension: number): string {
  const p = spec.particles;
  // Vacancies (a disorder realization's empty sites among them) decide which sites the digits are.
  const vacancies = (spec.extra.lattice as { vacancies?: number[] } | undefined)?.vacancies ?? [];
  return [
    p.kind,
    spec.chain.sites,
    spec.levels.count,
    p.number,
    p.maxPerSite,
    isComplex ? 'c' : 'r',
    dimension,
    vacancies.join(','),
  ].join(':');
}

/**
 * The next point's start vector: the normalized sum of this point's low eigenvectors, so Lanczos
 * starts with a large component along every wanted state, not only the ground state (measured:
 * with 2 or 4 states, the ground state alone saves nothing; the sum saves about as much as with 1).
 */
export function startVector(vectors: Float64Array[]): Float64Array | undefined {
  if (vectors.length === 0) return undefined;
  const sum = new Float64Array(vectors[0].length);
  for (const v of vectors) for (let t = 0; t < sum.length; t++) sum[t] += v[t];
  let norm = 0;
  for (let t = 0; t < sum.length; t++) norm += sum[t] * sum[t];
  if (!(norm > 0)) return vectors[0];
  const scale = 1 / Math.sqrt(norm);
  for (let t = 0; t < sum.length; t++) sum[t] *= scale;
  return sum;
}

function errorText(e: unknown): string {
  if (isRungchainError(e)) return `${e.name}: ${e.message}`;
  if (e instanceof RangeError && /allocation failed|Invalid typed array length|Array buffer/i.test(e.message)) {
    return `out of memory: ${e.message}`;
  }
  return e instanceof Error ? `${e.name}: ${e.message}` : String(e);
}

export function runScanTask(
  task: ScanTask,
  post: (message: TaskMessage) => void = (m) => task.port.postMessage(m),
): number {
  let previous: { key: string; states: Float64Array[]; start: Float64Array | undefined } | null = null;
  if (task.leadIn) {
    try {
      const spec = validateSpec(task.leadIn.raw);
      const plan = planPoint(spec);
      const lead = solvePoint(spec, {
        maxMemory: task.maxMemory,
        memoryLimitName: task.memoryLimitName,
        threads: task.threads ?? 1,
      });
      previous = {
        key: basisKey(spec, plan.model.isComplex, plan.dimension),
        states: lead.groundStates,
        start: startVector(lead.eigen?.vectors ?? lead.groundStates),
      };
    } catch {
      // The first point then starts cold and has no overlap, as without a lead-in.
      previous = null;
    }
  }
  let solved = 0;
  for (let k = 0; k < task.points.length; k++) {
    if (task.claims && claimNext(task.claims) !== k) break;
    const point = task.points[k];
    post({ kind: 'start', index: point.index });
    hooks.pointStarting?.(point.index);
    const started = performance.now();
    let record: ScanRecord;
    try {
      const spec = validateSpec(point.raw);
      const plan = planPoint(spec);
      const key = basisKey(spec, plan.model.isComplex, plan.dimension);
      const same = previous !== null && previous.key === key && previous.states.length > 0;
      const warm = task.warmStart && same;
      // A point with [spectrum] keeps its ground copies on the full basis for the continued fraction.
      const wantsSpectrum = spec.extra.spectrum !== undefined;
      const limits = { maxMemory: task.maxMemory, memoryLimitName: task.memoryLimitName, threads: task.threads ?? 1 };
      if (wantsSpectrum) prepareSpectrum(spec, limits);
      const solvedPoint = solvePoint(spec, {
        ...limits,
        initial: warm ? previous!.start : undefined,
        keepStates: wantsSpectrum ? 'ground' : undefined,
      });
      const spectrum = wantsSpectrum ? spectrumOfSolved(spec, solvedPoint, limits) : undefined;
      const ground = solvedPoint.groundStates;
      const overlap =
        same && ground.length > 0 ? groundSpaceOverlap(previous!.states, ground, plan.model.isComplex) : null;
      previous = { key, states: ground, start: startVector(solvedPoint.eigen?.vectors ?? ground) };
      record = {
        index: point.index,
        params: point.params,
        ...(plan.model.disorder ? { realization: plan.model.disorder.realization, disorder: plan.model.disorder } : {}),
        status: 'done',
        result: solvedPoint.record,
        ...(spectrum ? { spectrum } : {}),
        iterations: solvedPoint.record.solver.iterations,
        seconds: (performance.now() - started) / 1000,
        // The dense path ignores the start vector, so only Lanczos counts as warm.
        warm_start: warm && solvedPoint.record.solver.method === 'lanczos',
        overlap_previous: overlap,
        worker: threadId,
        finished: new Date().toISOString(),
      };
    } catch (e) {
      previous = null;
      const realization = point.params[REALIZATION_KEY];
      record = {
        index: point.index,
        params: point.params,
        ...(typeof realization === 'number' ? { realization, disorder: null } : {}),
        status: 'failed',
        error: errorText(e),
        iterations: 0,
        seconds: (performance.now() - started) / 1000,
        warm_start: false,
        overlap_previous: null,
        worker: threadId,
        finished: new Date().toISOString(),
      };
    }
    hooks.pointFinished?.(point.index);
    post({ kind: 'record', record });
    solved++;
  }
  return solved;
}
