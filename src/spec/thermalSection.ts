// The [thermal] section of a spec: thermal equilibrium at a list of temperatures (src/thermal/).
//
//   key                        default     meaning
//   -------------------------  ----------  -----------------------------------------------------------
//   thermal.temperatures       (one of     list of temperatures > 0, or { from, to, steps, spacing }
//                               the two)   (steps values, ends included; spacing "linear" or "log")
//   thermal.entropies                      list of entropies per particle (k_B = 1): each is turned
//                                          into the temperature that gives it (root of S(T)/Np = s)
//   thermal.temperature_unit   "model"     "model" (k_B T in the energy unit), "nK", "kHz" (k_B T / h);
//                                          "nK" and "kHz" need [units] for the energy scale
//   thermal.method             "auto"      "auto", "exact", "lanczos"
//   thermal.vectors            20          random start vectors per symmetry sector (Lanczos method)
//   thermal.steps              100         Lanczos steps per vector, at most the sector's dimension
//   thermal.seed               1           seed of the random vectors
//
// The temperatures are kept in the user's unit and also in model units (k_B = 1): the Boltzmann
// constant over Planck's is exact in the SI since 2019, k_B / h = 1.380649e-23 / 6.62607015e-34 Hz/K.

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import {
  describeValue,
  eitherOf,
  expectTable,
  finiteNumber,
  oneOf,
  orDefault,
  nonNegativeInteger,
  positiveInteger,
  rejectUnknownKeys,
} from './validate.js';
import { labUnits } from './units.js';

/** k_B / h in Hz per kelvin (SI 2019: both constants exact). */
export const BOLTZMANN_OVER_PLANCK_HZ_PER_K = 1.380649e-23 / 6.62607015e-34;

/** More temperatures than this is a stray exponent, not a curve. */
export const MAX_TEMPERATURES = 10_000;

export type TemperatureUnit = 'model' | 'nK' | 'kHz';
export type ThermalMethod = 'auto' | 'exact' | 'lanczos';

export interface ThermalSection {
  /** As the user wrote them, in `unit` (empty when `entropies` is given: found at run time). */
  temperatures: number[];
  /** Entropies per particle to find temperatures for, or null. */
  entropies: number[] | null;
  /** Temperature in `unit` per model temperature (1 for "model"; set by the resolver). */
  unitPerModel: number;
  unit: TemperatureUnit;
  /** k_B T in the model's energy unit (filled by the resolver; equal to `temperatures` for "model"). */
  modelTemperatures: number[];
  method: ThermalMethod;
  vectors: number;
  steps: number;
  seed: number;
}

const KEYS = ['temperatures', 'entropies', 'temperature_unit', 'method', 'vectors', 'steps', 'seed'] as const;

function tidy(x: number): number {
  return Number(x.toPrecision(15));
}

function positiveTemperature(value: unknown, path: string): number {
  const t = finiteNumber(value, path);
  if (t <= 0) throw new SpecError(path, `a temperature must be greater than 0, got ${t}`);
  return t;
}

function validateTemperatures(value: unknown, path: string): number[] {
  if (value === undefined)
    throw new SpecError(path, 'required key is missing (a list, or { from, to, steps }; or give entropies instead)');
  if (Array.isArray(value)) {
    if (value.length === 0) throw new SpecError(path, 'expected at least one temperature');
    if (value.length > MAX_TEMPERATURES)
      throw new SpecError(path, `at most ${MAX_TEMPERATURES} temperatures, got ${value.length}`);
    return value.map((v, i) => positiveTemperature(v, `${path}[${i}]`));
  }
  const table = expectTable(value, path);
  rejectUnknownKeys(table, path, ['from', 'to', 'steps', 'spacing']);
  const need = (k: string) => {
    if (table[k] === undefined) throw new SpecError(`${path}.${k}`, 'required with from/to/steps');
    return table[k];
  };
  const from = positiveTemperature(need('from'), `${path}.from`);
  const to = positiveTemperature(need('to'), `${path}.to`);
  const steps = positiveInteger(need('steps'), `${path}.steps`);
  if (steps > MAX_TEMPERATURES) throw new SpecError(`${path}.steps`, `at most ${MAX_TEMPERATURES}, got ${steps}`);
  if (steps === 1 && from !== to)
    throw new SpecError(`${path}.steps`, `one step cannot reach from = ${from} to = ${to}; use steps >= 2`);
  const spacing = eitherOf(orDefault(table.spacing, 'linear'), `${path}.spacing`, 'linear', 'log');
  const out: number[] = [];
  for (let k = 0; k < steps; k++) {
    if (k === 0) out.push(from);
    else if (k === steps - 1) out.push(to);
    else
      out.push(
        tidy(
          spacing === 'log'
            ? from * Math.exp((Math.log(to / from) * k) / (steps - 1))
            : from + ((to - from) * k) / (steps - 1),
        ),
      );
  }
  return out;
}

export function validateThermalSection(raw: unknown, keyPath: string): ThermalSection {
  const value = expectTable(raw, keyPath);
  rejectUnknownKeys(value, keyPath, KEYS);
  let temperatures: number[] = [];
  let entropies: number[] | null = null;
  if (value.entropies !== undefined) {
    if (value.temperatures !== undefined)
      throw new SpecError(`${keyPath}.entropies`, 'give either temperatures or entropies, not both');
    const list = value.entropies;
    if (!Array.isArray(list) || list.length === 0)
      throw new SpecError(
        `${keyPath}.entropies`,
        `expected a non-empty list of entropies per particle, got ${describeValue(list)}`,
      );
    if (list.length > MAX_TEMPERATURES)
      throw new SpecError(`${keyPath}.entropies`, `at most ${MAX_TEMPERATURES} entropies, got ${list.length}`);
    entropies = list.map((v, i) => {
      const x = finiteNumber(v, `${keyPath}.entropies[${i}]`);
      if (x <= 0)
        throw new SpecError(`${keyPath}.entropies[${i}]`, `an entropy per particle must be greater than 0, got ${x}`);
      return x;
    });
  } else temperatures = validateTemperatures(value.temperatures, `${keyPath}.temperatures`);
  const unit = oneOf(orDefault(value.temperature_unit, 'model'), `${keyPath}.temperature_unit`, [
    'model',
    'nK',
    'kHz',
  ] as const);
  const method = oneOf(orDefault(value.method, 'auto'), `${keyPath}.method`, ['auto', 'exact', 'lanczos'] as const);
  const vectors = positiveInteger(orDefault(value.vectors, 20), `${keyPath}.vectors`);
  const steps = positiveInteger(orDefault(value.steps, 100), `${keyPath}.steps`);
  if (vectors > 100_000) throw new SpecError(`${keyPath}.vectors`, `at most 100000, got ${vectors}`);
  if (steps > 10_000) throw new SpecError(`${keyPath}.steps`, `at most 10000, got ${steps}`);
  if (steps < 2) throw new SpecError(`${keyPath}.steps`, `expected at least 2, got ${describeValue(value.steps)}`);
  const seed = nonNegativeInteger(orDefault(value.seed, 1), `${keyPath}.seed`);
  return {
    temperatures,
    entropies,
    unitPerModel: 1,
    unit,
    modelTemperatures: temperatures.slice(),
    method,
    vectors,
    steps,
    seed,
  };
}

/** Turns the temperatures into model units once [units] has fixed the energy scale. */
export function resolveThermalSection(spec: Spec): void {
  const section = spec.extra.thermal as ThermalSection;
  if (section.unit === 'model') {
    section.modelTemperatures = section.temperatures.slice();
    return;
  }
  const units = labUnits(spec);
  if (!units)
    throw new SpecError(
      'thermal.temperature_unit',
      `"${section.unit}" needs a [units] section to know the energy scale`,
    );
  // k_B T / h in Hz, then in units of the model's energy unit (h * energyUnitHz)
  const hzPerUnit = section.unit === 'nK' ? 1e-9 * BOLTZMANN_OVER_PLANCK_HZ_PER_K : 1e3;
  section.unitPerModel = units.energyUnitHz / hzPerUnit;
  section.modelTemperatures = section.temperatures.map((t) => (t * hzPerUnit) / units.energyUnitHz);
}

/** The spec's [thermal] section, or null. */
export function thermalSectionOf(spec: Spec): ThermalSection | null {
  const value = spec.extra.thermal;
  return value === undefined ? null : (value as ThermalSection);
}
