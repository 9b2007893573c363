// The [evolve] section of a spec: times, ramps and the initial state, validated with the rest of
// the spec (before anything is solved), so a worker that only reads specs never loads the evolution.

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import {
  describeValue,
  eitherOf,
  expectTable,
  finiteNumber,
  integerAtLeast,
  integerList,
  isTable,
  nonNegativeNumber,
  orDefault,
  positiveNumber,
  quoteText,
  rejectUnknownKeys,
  requiredKey,
} from './validate.js';

/** A resonant pulse of area `area` (= Omega * duration) and phase `phase` between two levels. */
export interface Pulse {
  between: [number, number];
  area: number;
  phase: number;
  /** Sites the pulse reaches; null for all. */
  sites: number[] | null;
}

export interface Ramp {
  /** Where this ramp sits in the spec, for error messages: evolve.ramp or evolve.ramp[k]. */
  path: string;
  key: string;
  from: number;
  to: number;
  start: number;
  duration: number;
  steps: number;
}

export type InitialState =
  { kind: 'levels'; levels: number[] | null; pulses: Pulse[] } | { kind: 'ground_state'; changes: [string, unknown][] };

export interface EvolveSection {
  initial: InitialState;
  /** Recorded times in `timeUnit`, strictly ascending, >= 0. */
  times: number[];
  timeUnit: 'model' | 'ms';
  tolerance: number;
  krylov: number;
  ramps: Ramp[];
}

function validateInitial(value: unknown, path: string): InitialState {
  if (value === undefined) return { kind: 'levels', levels: null, pulses: [] };
  if (value === 'ground_state') return { kind: 'ground_state', changes: [] };
  // -1 marks an empty site (itinerant kinds).
  if (Array.isArray(value)) return { kind: 'levels', levels: integerList(value, path, -1), pulses: [] };
  if (!isTable(value)) {
    throw new SpecError(
      path,
      `expected a list of levels (one per site), a table with levels/pulses or ground_state, or "ground_state"; got ${describeValue(value)}`,
    );
  }
  if (value.ground_state !== undefined) {
    rejectUnknownKeys(value, path, ['ground_state']);
    const changes = expectTable(value.ground_state, `${path}.ground_state`);
    return { kind: 'ground_state', changes: Object.entries(changes) };
  }
  rejectUnknownKeys(value, path, ['levels', 'pulses', 'ground_state']);
  const levels = value.levels === undefined ? null : integerList(value.levels, `${path}.levels`, -1);
  const pulses: Pulse[] = [];
  if (value.pulses !== undefined) {
    const list = Array.isArray(value.pulses) ? value.pulses : [value.pulses];
    list.forEach((p, k) => {
      const at = Array.isArray(value.pulses) ? `${path}.pulses[${k}]` : `${path}.pulses`;
      const t = expectTable(p, at);
      rejectUnknownKeys(t, at, ['between', 'area', 'phase', 'sites']);
      const between = integerList(t.between, `${at}.between`);
      if (between.length !== 2 || between[0] === between[1]) {
        throw new SpecError(`${at}.between`, `expected two different levels [a, b], got ${describeValue(t.between)}`);
      }
      const area = requiredKey(t, at, 'area', 'pi for a full transfer, pi/2 for an equal superposition');
      pulses.push({
        between: [between[0], between[1]],
        area: finiteNumber(area, `${at}.area`),
        phase: t.phase === undefined ? 0 : finiteNumber(t.phase, `${at}.phase`),
        sites: t.sites === undefined ? null : integerList(t.sites, `${at}.sites`),
      });
    });
  }
  return { kind: 'levels', levels, pulses };
}

/**
 * Most recorded times of one trace, and most pieces of one ramp. Each recorded time is a record
 * with every observable; each ramp piece is a Hamiltonian rebuilt. Beyond these a trace is a
 * mistake (a stray exponent in `steps`), and the count is checked before any time is made.
 */
export const MAX_EVOLVE_TIMES = 100_000;
export const MAX_RAMP_STEPS = 100_000;

function validateTimes(value: unknown, path: string): number[] {
  if (value === undefined)
    throw new SpecError(path, 'required key is missing (a list of times, or { from, to, steps })');
  if (Array.isArray(value)) {
    if (value.length === 0) throw new SpecError(path, 'expected at least one time');
    if (value.length > MAX_EVOLVE_TIMES)
      throw new SpecError(path, `at most ${MAX_EVOLVE_TIMES} recorded times, got ${value.length}`);
    const times = value.map((v, i) => nonNegativeNumber(v, `${path}[${i}]`));
    for (let i = 1; i < times.length; i++) {
      if (!(times[i] > times[i - 1]))
        throw new SpecError(`${path}[${i}]`, `times must increase strictly; ${times[i]} follows ${times[i - 1]}`);
    }
    return times;
  }
  const t = expectTable(value, path);
  rejectUnknownKeys(t, path, ['from', 'to', 'steps']);
  const from = t.from === undefined ? 0 : nonNegativeNumber(t.from, `${path}.from`);
  const to = nonNegativeNumber(requiredKey(t, path, 'to'), `${path}.to`);
  if (!(to > from)) throw new SpecError(`${path}.to`, `must exceed from = ${from}, got ${to}`);
  const stepsValue = requiredKey(t, path, 'steps', 'the number of intervals; steps+1 times are recorded');
  const steps = integerAtLeast(stepsValue, `${path}.steps`, 1);
  // steps + 1 times are recorded.
  if (steps >= MAX_EVOLVE_TIMES)
    throw new SpecError(
      `${path}.steps`,
      `at most ${MAX_EVOLVE_TIMES - 1} (steps + 1 times are recorded, at most ${MAX_EVOLVE_TIMES}), got ${steps}`,
    );
  return Array.from({ length: steps + 1 }, (_, k) => (k === steps ? to : from + ((to - from) * k) / steps));
}

function validateRamp(value: unknown, path: string): Ramp {
  const t = expectTable(value, path);
  rejectUnknownKeys(t, path, ['key', 'from', 'to', 'duration', 'start', 'steps']);
  if (typeof t.key !== 'string' || t.key.trim() === '') {
    throw new SpecError(
      `${path}.key`,
      `expected a spec key path such as "exchange.strength", got ${describeValue(t.key)}`,
    );
  }
  const key = t.key.trim();
  if (key.startsWith('evolve.') || key === 'evolve' || key.startsWith('scan.')) {
    throw new SpecError(`${path}.key`, `a ramp moves a model key, not ${quoteText(key)}`);
  }
  for (const required of ['from', 'to', 'duration']) requiredKey(t, path, required);
  return {
    path,
    key,
    from: finiteNumber(t.from, `${path}.from`),
    to: finiteNumber(t.to, `${path}.to`),
    duration: positiveNumber(finiteNumber(t.duration, `${path}.duration`), `${path}.duration`),
    start: t.start === undefined ? 0 : nonNegativeNumber(t.start, `${path}.start`),
    steps: t.steps === undefined ? 100 : rampSteps(t.steps, `${path}.steps`),
  };
}

function rampSteps(value: unknown, path: string): number {
  const steps = integerAtLeast(value, path, 1);
  if (steps > MAX_RAMP_STEPS) throw new SpecError(path, `at most ${MAX_RAMP_STEPS} pieces per ramp, got ${steps}`);
  return steps;
}

export function validateEvolveSection(value: unknown, keyPath: string): EvolveSection {
  const t = expectTable(value, keyPath);
  rejectUnknownKeys(t, keyPath, ['initial', 'times', 'time_unit', 'tolerance', 'krylov', 'ramp']);
  const timeUnit = eitherOf(orDefault(t.time_unit, 'model'), `${keyPath}.time_unit`, 'model', 'ms');
  // A value that is no number is named as not finite before its sign is checked.
  const tolerance =
    t.tolerance === undefined
      ? 1e-8
      : positiveNumber(finiteNumber(t.tolerance, `${keyPath}.tolerance`), `${keyPath}.tolerance`);
  // Below ~1e-13 the bound is lost in the rounding of the state itself.
  if (tolerance < 1e-13 || tolerance >= 1) {
    throw new SpecError(`${keyPath}.tolerance`, `expected a value between 1e-13 and 1, got ${tolerance}`);
  }
  const krylov = t.krylov === undefined ? 30 : integerAtLeast(t.krylov, `${keyPath}.krylov`, 2);
  if (krylov > 500) throw new SpecError(`${keyPath}.krylov`, `at most 500 (memory grows with it), got ${krylov}`);
  let ramps: Ramp[] = [];
  if (t.ramp !== undefined) {
    ramps = Array.isArray(t.ramp)
      ? t.ramp.map((r, k) => validateRamp(r, `${keyPath}.ramp[${k}]`))
      : [validateRamp(t.ramp, `${keyPath}.ramp`)];
  }
  return {
    initial: validateInitial(t.initial, `${keyPath}.initial`),
    times: validateTimes(t.times, `${keyPath}.times`),
    timeUnit,
    tolerance,
    krylov,
    ramps,
  };
}

/** Checks the parts of [evolve] that depend on the rest of the spec. */
export function resolveEvolveSection(spec: Spec): void {
  const section = spec.extra.evolve as EvolveSection;
  const L = spec.chain.sites;
  const N = spec.levels.count;
  if (section.timeUnit === 'ms' && spec.extra.units === undefined) {
    throw new SpecError('evolve.time_unit', '"ms" needs a [units] section to know the energy scale');
  }
  const initial = section.initial;
  if (initial.kind === 'levels') {
    if (initial.levels !== null) {
      const path = 'evolve.initial' + (initial.pulses.length > 0 ? '.levels' : '');
      if (initial.levels.length !== L)
        throw new SpecError(path, `expected one level per site (${L}), got ${initial.levels.length}`);
      initial.levels.forEach((n, i) => {
        if (n >= N) throw new SpecError(`${path}[${i}]`, `level ${n} does not exist: levels.count is ${N}`);
        if (n < 0 && spec.particles.kind === 'pinned')
          throw new SpecError(`${path}[${i}]`, 'pinned particles fill every site: -1 (empty) is for itinerant kinds');
      });
      const placed = initial.levels.filter((n) => n >= 0).length;
      if (placed !== spec.particles.number) {
        throw new SpecError(
          path,
          `places ${placed} particles (one per site not marked -1), but particles.number is ${spec.particles.number}`,
        );
      }
    } else if (spec.particles.number !== L) {
      throw new SpecError(
        'evolve.initial',
        `the default start (every site in level 0) needs one particle per site; with particles.number = ${spec.particles.number} give evolve.initial with -1 on empty sites`,
      );
    }
    initial.pulses.forEach((p, k) => {
      const at = `evolve.initial.pulses[${k}]`;
      p.between.forEach((n, j) => {
        if (n >= N) throw new SpecError(`${at}.between[${j}]`, `level ${n} does not exist: levels.count is ${N}`);
      });
      p.sites?.forEach((i, j) => {
        if (i >= L) throw new SpecError(`${at}.sites[${j}]`, `site ${i} does not exist: chain.sites is ${L}`);
      });
    });
  }
}
