// The [spectrum] section of a spec: which operator probes the ground state, at which frequencies,
// with what broadening (issue 22). Validated with the rest of the spec, before anything is solved,
// so a scan refuses a bad probe before its first point. The spectrum itself lives in src/spectrum/.
//
// Keys and defaults (docs/model.md, "Spectra"):
//   spectrum.probe                 required: a table with exactly one of link, level, coordinate
//   spectrum.probe.link            link l: sum_i c_i (e^{i phase} a+_{i,l+1} a_{i,l} + h.c.)
//   spectrum.probe.level           level n: sum_i c_i n_{i,n}
//   spectrum.probe.coordinate      true: sum_i c_i sum_n n n_{i,n}, the synthetic coordinate
//   spectrum.probe.phase           0 (radians; link probes only)
//   spectrum.probe.sites           "all", or a list of model sites
//   spectrum.probe.momentum        0: c_i = e^{i q . r_i}, an integer m on a chain, one per lattice direction
//   spectrum.frequencies           required: { from = 0, to, steps = 401 }
//   spectrum.frequency_unit        "model", or "khz" (needs [units])
//   spectrum.broadening            2 frequency steps: a number (Lorentzian half width) or
//                                  { lorentzian, gaussian } (half widths at half maximum; both: Voigt)
//   spectrum.tolerance             1e-6: the curve's largest change from n to 2n levels, relative to its peak
//   spectrum.max_levels            2000 continued-fraction levels at most
//   spectrum.lines                 10 strongest lines listed
//   spectrum.temperature           0: k_B T in temperature_unit; above 0 the Boltzmann-weighted Lehmann sum
//   spectrum.temperature_unit      "model", "nK" or "kHz" (k_B T / h), as thermal.temperature_unit (needs [units])
//   spectrum.method                "auto": at T > 0, "exact" (every eigenpair per sector) up to the
//                                  thermal exact block limit, else "lanczos" (finite-temperature Lanczos)
//   spectrum.vectors               20 random vectors (Lanczos method at T > 0)
//   spectrum.steps                 100 Lanczos steps per vector and chain (Lanczos method at T > 0)
//   spectrum.seed                  1: seed of the random vectors

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import { modelTemperaturePerUnit } from './temperatureUnits.js';
import {
  describeValue,
  expectTable,
  finiteNumber,
  integerAtLeast,
  integerList,
  isTable,
  nonNegativeInteger,
  nonNegativeNumber,
  oneOf,
  orDefault,
  positiveInteger,
  positiveNumber,
  rejectUnknownKeys,
  requiredKey,
} from './validate.js';

export type ProbeKind = 'drive' | 'level' | 'coordinate';

export interface ProbeSpec {
  kind: ProbeKind;
  /** The link of a drive, the level of a population; null for the coordinate. */
  link: number | null;
  level: number | null;
  /** Radians: the drive's phase (0 for other probes). */
  phase: number;
  /** Model sites the probe reaches; null for every site. */
  sites: number[] | null;
  /** An integer on a chain, one integer per lattice direction elsewhere (checked against the geometry later). */
  momentum: number | number[];
}

export interface SpectrumSection {
  probe: ProbeSpec;
  /** In `frequencyUnit`. */
  from: number;
  to: number;
  steps: number;
  frequencyUnit: 'model' | 'khz';
  /** Half widths at half maximum, in `frequencyUnit`; exactly one is above 0. */
  lorentzian: number;
  gaussian: number;
  tolerance: number;
  maxLevels: number;
  lines: number;
  /** In `temperatureUnit`; 0 for the ground state. */
  temperature: number;
  temperatureUnit: 'model' | 'nK' | 'kHz';
  /** k_B T in model units (set when the spec is resolved). */
  modelTemperature: number;
  method: 'auto' | 'exact' | 'lanczos';
  vectors: number;
  /** Lanczos steps per random vector (finite temperature). */
  thermalSteps: number;
  seed: number;
}

/** Most points of the fine grid a Voigt profile's convolution may use (as src/spectrum/ allows). */
export const MAX_VOIGT_POINTS = 4_000_000;
/** Most frequencies a curve may have. */
export const MAX_FREQUENCY_STEPS = 100_000;
const SECTION_KEYS = [
  'probe',
  'frequencies',
  'frequency_unit',
  'broadening',
  'tolerance',
  'max_levels',
  'lines',
  'temperature',
  'temperature_unit',
  'method',
  'vectors',
  'steps',
  'seed',
];
// Momenta may be negative: q and q + 2 pi are the same, but -1 reads better than L - 1.
const ANY = Number.MAX_SAFE_INTEGER;
const PROBE_KEYS = ['link', 'level', 'coordinate', 'phase', 'sites', 'momentum'];

function validateProbe(raw: unknown, path: string): ProbeSpec {
  const t = expectTable(raw, path);
  rejectUnknownKeys(t, path, PROBE_KEYS);
  const chosen = ['link', 'level', 'coordinate'].filter((k) => t[k] !== undefined);
  if (chosen.length !== 1) {
    throw new SpecError(
      path,
      chosen.length === 0
        ? 'needs one of link (a drive), level (a level population) or coordinate = true (the synthetic coordinate)'
        : `gives ${chosen.join(' and ')}: a probe is one of link, level or coordinate`,
    );
  }
  const kind: ProbeKind = chosen[0] === 'link' ? 'drive' : chosen[0] === 'level' ? 'level' : 'coordinate';
  if (kind === 'coordinate' && t.coordinate !== true)
    throw new SpecError(`${path}.coordinate`, `expected true, got ${describeValue(t.coordinate)}`);
  if (kind !== 'drive' && t.phase !== undefined)
    throw new SpecError(`${path}.phase`, 'a phase belongs to a drive (probe.link) only; remove the key');
  let sites: number[] | null = null;
  const sitesValue = orDefault(t.sites, 'all');
  if (sitesValue !== 'all') {
    if (!Array.isArray(sitesValue))
      throw new SpecError(`${path}.sites`, `expected "all" or a list of sites, got ${describeValue(sitesValue)}`);
    sites = integerList(sitesValue, `${path}.sites`);
    if (sites.length === 0) throw new SpecError(`${path}.sites`, 'is empty: list at least one site, or "all"');
    const seen = new Set<number>();
    sites.forEach((s, k) => {
      if (seen.has(s)) throw new SpecError(`${path}.sites[${k}]`, `site ${s} is listed twice`);
      seen.add(s);
    });
  }
  const m = orDefault(t.momentum, 0);
  const momentum = Array.isArray(m)
    ? integerList(m, `${path}.momentum`, -ANY)
    : integerAtLeast(m, `${path}.momentum`, -ANY);
  return {
    kind,
    link: kind === 'drive' ? nonNegativeInteger(t.link, `${path}.link`) : null,
    level: kind === 'level' ? nonNegativeInteger(t.level, `${path}.level`) : null,
    phase: kind === 'drive' ? finiteNumber(orDefault(t.phase, 0), `${path}.phase`) : 0,
    sites,
    momentum,
  };
}

export function validateSpectrumSection(raw: unknown, keyPath: string): SpectrumSection {
  const t = expectTable(raw, keyPath);
  rejectUnknownKeys(t, keyPath, SECTION_KEYS);
  const probe = validateProbe(requiredKey(t, keyPath, 'probe', 'e.g. probe = { link = 0 }'), `${keyPath}.probe`);
  const fPath = `${keyPath}.frequencies`;
  const f = expectTable(requiredKey(t, keyPath, 'frequencies', 'e.g. frequencies = { from = 0, to = 4 }'), fPath);
  rejectUnknownKeys(f, fPath, ['from', 'to', 'steps']);
  const from = finiteNumber(orDefault(f.from, 0), `${fPath}.from`);
  const to = finiteNumber(requiredKey(f, fPath, 'to'), `${fPath}.to`);
  if (!(to > from)) throw new SpecError(`${fPath}.to`, `must lie above frequencies.from (${from}), got ${to}`);
  const steps = integerAtLeast(orDefault(f.steps, 401), `${fPath}.steps`, 2);
  if (steps > MAX_FREQUENCY_STEPS)
    throw new SpecError(`${fPath}.steps`, `at most ${MAX_FREQUENCY_STEPS} frequencies, got ${steps}`);
  const frequencyUnit = oneOf(orDefault(t.frequency_unit, 'model'), `${keyPath}.frequency_unit`, ['model', 'khz']);
  const bPath = `${keyPath}.broadening`;
  let lorentzian = (2 * (to - from)) / (steps - 1);
  let gaussian = 0;
  if (t.broadening !== undefined) {
    if (isTable(t.broadening)) {
      rejectUnknownKeys(t.broadening, bPath, ['lorentzian', 'gaussian']);
      lorentzian = nonNegativeNumber(orDefault(t.broadening.lorentzian, 0), `${bPath}.lorentzian`);
      gaussian = nonNegativeNumber(orDefault(t.broadening.gaussian, 0), `${bPath}.gaussian`);
      if (lorentzian > 0 && gaussian > 0) {
        // The Voigt convolution's fine grid (src/spectrum/continuedFraction.ts): 6 points per
        // Lorentzian half width over the window and 8.5 Gaussian standard deviations each side.
        const delta = (to - from) / (steps - 1);
        const h = delta / Math.max(1, Math.ceil((6 * delta) / lorentzian));
        const points = (steps - 1) * (delta / h) + 2 * Math.ceil((8.5 * gaussian) / Math.sqrt(2 * Math.LN2) / h);
        if (points > MAX_VOIGT_POINTS)
          throw new SpecError(
            `${bPath}.lorentzian`,
            `a Voigt profile this narrow against the window (or this wide a Gaussian) needs ${Math.round(points)} points of its fine grid, more than ${MAX_VOIGT_POINTS}; widen the Lorentzian or narrow the window`,
          );
      }
      if (lorentzian === 0 && gaussian === 0)
        throw new SpecError(bPath, 'needs lorentzian or gaussian above 0: lines without width cannot be drawn');
    } else lorentzian = positiveNumber(t.broadening, bPath);
  }
  const temperature = nonNegativeNumber(orDefault(t.temperature, 0), `${keyPath}.temperature`);
  const temperatureUnit = oneOf(orDefault(t.temperature_unit, 'model'), `${keyPath}.temperature_unit`, [
    'model',
    'nK',
    'kHz',
  ] as const);
  const method = oneOf(orDefault(t.method, 'auto'), `${keyPath}.method`, ['auto', 'exact', 'lanczos'] as const);
  const vectors = positiveInteger(orDefault(t.vectors, 20), `${keyPath}.vectors`);
  if (vectors > 100_000) throw new SpecError(`${keyPath}.vectors`, `at most 100000, got ${vectors}`);
  const thermalSteps = integerAtLeast(orDefault(t.steps, 100), `${keyPath}.steps`, 2);
  if (thermalSteps > 10_000) throw new SpecError(`${keyPath}.steps`, `at most 10000, got ${thermalSteps}`);
  const seed = nonNegativeInteger(orDefault(t.seed, 1), `${keyPath}.seed`);
  const tolerance = positiveNumber(orDefault(t.tolerance, 1e-6), `${keyPath}.tolerance`);
  return {
    probe,
    from,
    to,
    steps,
    frequencyUnit,
    lorentzian,
    gaussian,
    tolerance,
    maxLevels: integerAtLeast(orDefault(t.max_levels, 2000), `${keyPath}.max_levels`, 2),
    lines: positiveInteger(orDefault(t.lines, 10), `${keyPath}.lines`),
    temperature,
    temperatureUnit,
    modelTemperature: temperature,
    method,
    vectors,
    thermalSteps,
    seed,
  };
}

/** Checks against the rest of the spec: the link and level exist, "khz" has [units]. Sites and momenta need the geometry (src/spectrum/). */
export function resolveSpectrumSection(spec: Spec): void {
  const section = spec.extra.spectrum as SpectrumSection;
  const N = spec.levels.count;
  const links = spec.levels.boundary === 'ring' ? N : N - 1;
  const { probe } = section;
  if (probe.link !== null && probe.link >= links)
    throw new SpecError(
      'spectrum.probe.link',
      `link ${probe.link} does not exist: the ladder of ${N} levels (${spec.levels.boundary}) has links 0..${links - 1}`,
    );
  if (probe.level !== null && probe.level >= N)
    throw new SpecError('spectrum.probe.level', `level ${probe.level} does not exist: levels.count is ${N}`);
  if (section.frequencyUnit === 'khz' && spec.extra.units === undefined)
    throw new SpecError('spectrum.frequency_unit', '"khz" needs a [units] section to know the energy scale');
  section.modelTemperature =
    section.temperature * modelTemperaturePerUnit(spec, section.temperatureUnit, 'spectrum.temperature_unit');
}
