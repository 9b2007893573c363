// Laboratory units: the optional [units] section turns a molecule's dipole moment, the lattice
// spacing, the dipole angle and the microwave Rabi frequencies into the model's couplings, and
// gives the scale that turns model energies into Hz and model times into ms.
//
//   key                       default   meaning
//   ------------------------  --------  ------------------------------------------------------------
//   units.dipole_debye        none      permanent dipole moment d of the molecule, debye
//   units.lattice_spacing_nm  none      distance a between neighbouring sites, nm (needed with d)
//   units.dipole_angle_deg    90        angle theta between the dipoles (quantization axis) and the chain
//   units.rotational_constant_ghz none  B/h, GHz: reported as the microwave frequency 2B(n+1) of each link
//   units.rabi_khz            none      Omega/2pi per link (number or one per link), kHz
//   units.detuning_khz        none      detuning/h per level (number or one per level), kHz
//   units.energy_unit_hz      J of link 0, else |V|   the model's energy unit, as h times this many Hz
//
// Conventions (hbar = 1 inside the model; an energy E in the model is E * energy_unit_hz * h):
// - Tunnelling from the Rabi frequency: a resonant microwave couples two levels by (Omega/2)(|b><a| + h.c.)
//   in the rotating frame, so J = Omega/2, i.e. J/h = (Omega/2pi)/2. With J = Omega/2 one molecule
//   starting in level 0 has P1(t) = sin^2(J t) = sin^2(Omega t / 2), Rabi's formula.
// - Exchange: two dipoles a apart with their quantization axis at theta to the chain exchange one
//   quantum of rotation with amplitude |<n,0|d_z|n+1,0>|^2 (1 - 3 cos^2 theta) / (4 pi eps0 a^3)
//   (only the M = 0 ladder is dressed). V is this for the lowest link (|<0|d_z|1>|^2 = d^2/3); the
//   other links get the rigid-rotor weights c_n of docs/model.md, and with range "dipolar" V falls as 1/r^3.
//   Unless the spec sets them, [units] makes exchange.range "dipolar" and exchange.weights "rotor",
//   because that is what real dipoles do.
// Constants: CODATA 2018 (c and h exact in the SI since 2019; eps0 measured).

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import {
  describeValue,
  expectTable,
  finiteNumber,
  isTable,
  positiveNumber,
  rejectUnknownKeys,
  type Table,
} from './validate.js';

export const CODATA_2018 = {
  /** Speed of light in vacuum, m/s (exact). */
  speedOfLight: 299_792_458,
  /** Planck constant, J s (exact). */
  planck: 6.626_070_15e-34,
  /** Vacuum electric permittivity, F/m (CODATA 2018 recommended value). */
  vacuumPermittivity: 8.854_187_812_8e-12,
} as const;

/** One debye in C m: 1e-21 / c (definition of the unit). */
export const DEBYE = 1e-21 / CODATA_2018.speedOfLight;

export interface UnitsInput {
  dipoleDebye: number | null;
  latticeSpacingNm: number | null;
  dipoleAngleDeg: number;
  rotationalConstantGhz: number | null;
  rabiKhz: number | number[] | null;
  detuningKhz: number | number[] | null;
  energyUnitHz: number | null;
}

/** What the [units] section resolved to: stored in spec.extra.units after validation. */
export interface LabUnits {
  input: UnitsInput;
  /** The model's energy unit in Hz (an energy E in the model is E * energyUnitHz * h). */
  energyUnitHz: number;
  /** The model's time unit in ms (t = 1 in the model is hbar / (h energyUnitHz) = 1 / (2 pi energyUnitHz) s). */
  timeUnitMs: number;
  /** Exchange V/h of the lowest link at one lattice spacing, Hz (null when no dipole moment is given). */
  exchangeHz: number | null;
  /** Tunnelling J/h per link, Hz (null when no Rabi frequency is given). */
  tunnellingHz: number[] | null;
  /** Microwave frequency of each open link of a rigid rotor, 2B(n+1), GHz (null without B). */
  linkFrequenciesGhz: number[] | null;
}

// ---------------------------------------------------------------------------------------------
// Angular-momentum algebra for the rigid rotor

function factorial(n: number): number {
  let f = 1;
  for (let k = 2; k <= n; k++) f *= k;
  return f;
}

/**
 * Wigner 3j symbol (j1 j2 j3; m1 m2 m3) for integer arguments, by Racah's closed formula.
 * Exact enough for the small j of a rotor ladder (factorials stay well inside double range for j <= 40).
 */
export function wigner3j(j1: number, j2: number, j3: number, m1: number, m2: number, m3: number): number {
  if (m1 + m2 + m3 !== 0) return 0;
  if (j3 < Math.abs(j1 - j2) || j3 > j1 + j2) return 0;
  if (Math.abs(m1) > j1 || Math.abs(m2) > j2 || Math.abs(m3) > j3) return 0;
  const triangle =
    (factorial(j1 + j2 - j3) * factorial(j1 - j2 + j3) * factorial(-j1 + j2 + j3)) / factorial(j1 + j2 + j3 + 1);
  const norm = Math.sqrt(
    triangle *
      factorial(j1 + m1) *
      factorial(j1 - m1) *
      factorial(j2 + m2) *
      factorial(j2 - m2) *
      factorial(j3 + m3) *
      factorial(j3 - m3),
  );
  const kMin = Math.max(0, j2 - j3 - m1, j1 - j3 + m2);
  const kMax = Math.min(j1 + j2 - j3, j1 - m1, j2 + m2);
  let sum = 0;
  for (let k = kMin; k <= kMax; k++) {
    const term =
      factorial(k) *
      factorial(j1 + j2 - j3 - k) *
      factorial(j1 - m1 - k) *
      factorial(j2 + m2 - k) *
      factorial(j3 - j2 + m1 + k) *
      factorial(j3 - j1 - m2 + k);
    sum += (k % 2 === 0 ? 1 : -1) / term;
  }
  const phase = (j1 - j2 - m3) % 2 === 0 ? 1 : -1;
  return phase * norm * sum;
}

/**
 * <J M| d_q |J' M'> / d for a rigid rotor with permanent dipole d along its axis: the spherical
 * component q of the dipole operator is d C^1_q, and by the Wigner–Eckart theorem
 * <J M|C^1_q|J' M'> = (-1)^M sqrt((2J+1)(2J'+1)) (J 1 J'; -M q M') (J 1 J'; 0 0 0).
 */
export function rotorDipoleElement(J: number, M: number, Jp: number, Mp: number, q: number): number {
  const phase = M % 2 === 0 ? 1 : -1;
  return phase * Math.sqrt((2 * J + 1) * (2 * Jp + 1)) * wigner3j(J, 1, Jp, -M, q, Mp) * wigner3j(J, 1, Jp, 0, 0, 0);
}

/** |<n,0|d_z|n+1,0>|^2 / d^2: the squared transition dipole of link n of the M = 0 ladder. */
export function rotorLinkStrength(n: number): number {
  const element = rotorDipoleElement(n, 0, n + 1, 0, 0);
  return element * element;
}

// ---------------------------------------------------------------------------------------------
// Conversions

/**
 * Dipolar energy scale d1 d2 / (4 pi eps0 a^3) / h in Hz for two dipole moments in debye at a
 * distance in nm; multiply by (1 - 3 cos^2 theta) for the angle to the separation.
 */
export function dipolarScaleHz(dipole1Debye: number, dipole2Debye: number, distanceNm: number): number {
  const d1 = dipole1Debye * DEBYE;
  const d2 = dipole2Debye * DEBYE;
  const r = distanceNm * 1e-9;
  return (d1 * d2) / (4 * Math.PI * CODATA_2018.vacuumPermittivity * r * r * r) / CODATA_2018.planck;
}

/** Exchange V/h (Hz) of the lowest rotor link for dipole d (debye) at spacing a (nm), angle theta (degrees) to the chain. */
export function exchangeHz(dipoleDebye: number, latticeSpacingNm: number, angleDeg: number): number {
  const c = Math.cos((angleDeg * Math.PI) / 180);
  const angular = 1 - 3 * c * c;
  // Rounding leaves ~1e-16 at the magic angle; that is zero.
  const cleaned = Math.abs(angular) < 1e-14 ? 0 : angular;
  return rotorLinkStrength(0) * dipolarScaleHz(dipoleDebye, dipoleDebye, latticeSpacingNm) * cleaned;
}

/** Tunnelling J/h in Hz from the Rabi frequency Omega/2pi in kHz: J = Omega/2. */
export function tunnellingHzFromRabi(rabiKhz: number): number {
  return (rabiKhz * 1e3) / 2;
}

/** Milliseconds in one model time unit when the energy unit is h * energyUnitHz (hbar = 1 in the model). */
export function timeUnitMs(energyUnitHz: number): number {
  return 1e3 / (2 * Math.PI * energyUnitHz);
}

/** The resolved lab units of a spec, or null when it has no [units] section. */
export function labUnits(spec: Spec): LabUnits | null {
  const value = spec.extra.units;
  return value === undefined ? null : (value as LabUnits);
}

// ---------------------------------------------------------------------------------------------
// The [units] section

const UNIT_KEYS = [
  'dipole_debye',
  'lattice_spacing_nm',
  'dipole_angle_deg',
  'rotational_constant_ghz',
  'rabi_khz',
  'detuning_khz',
  'energy_unit_hz',
] as const;

// Its length is checked once the rest of the spec says how many links or levels there are.
function numberOrList(value: unknown, path: string): number | number[] {
  if (Array.isArray(value)) return value.map((v, i) => finiteNumber(v, `${path}[${i}]`));
  if (typeof value !== 'number')
    throw new SpecError(path, `expected a number or a list of numbers, got ${describeValue(value)}`);
  return finiteNumber(value, path);
}

export function validateUnitsSection(raw: unknown, keyPath: string): UnitsInput {
  const value = expectTable(raw, keyPath);
  rejectUnknownKeys(value, keyPath, UNIT_KEYS);
  const opt = <T>(key: string, read: (v: unknown, p: string) => T): T | null =>
    value[key] === undefined ? null : read(value[key], `${keyPath}.${key}`);
  const input: UnitsInput = {
    dipoleDebye: opt('dipole_debye', positiveNumber),
    latticeSpacingNm: opt('lattice_spacing_nm', positiveNumber),
    dipoleAngleDeg: opt('dipole_angle_deg', finiteNumber) ?? 90,
    rotationalConstantGhz: opt('rotational_constant_ghz', positiveNumber),
    rabiKhz: opt('rabi_khz', numberOrList),
    detuningKhz: opt('detuning_khz', numberOrList),
    energyUnitHz: opt('energy_unit_hz', positiveNumber),
  };
  if (input.dipoleDebye !== null && input.latticeSpacingNm === null) {
    throw new SpecError(
      `${keyPath}.lattice_spacing_nm`,
      'required with units.dipole_debye (the exchange falls as 1/a^3)',
    );
  }
  if (input.latticeSpacingNm !== null && input.dipoleDebye === null) {
    throw new SpecError(
      `${keyPath}.dipole_debye`,
      'required with units.lattice_spacing_nm (the exchange scales as d^2)',
    );
  }
  return input;
}

function hasKey(raw: Table, section: string, key: string): boolean {
  const table = raw[section];
  return isTable(table) && Object.hasOwn(table, key);
}

/** Expands a number to `length` slots, or checks a list has exactly `length`. */
function perSlot(value: number | number[], length: number, path: string, why: string): number[] {
  if (!Array.isArray(value)) return new Array<number>(length).fill(value);
  if (value.length !== length) throw new SpecError(path, `expected ${length} values (${why}), got ${value.length}`);
  return value;
}

/** Writes the couplings [units] implies into the validated spec, refusing keys set both ways. */
export function resolveUnits(spec: Spec, raw: Record<string, unknown>): void {
  const input = spec.extra.units as UnitsInput;
  const conflict = (section: string, key: string, from: string): void => {
    if (hasKey(raw, section, key)) {
      throw new SpecError(`${section}.${key}`, `is set by [units] from ${from}; set one or the other, not both`);
    }
  };

  const links = spec.levels.tunnelling.length;
  const openLinks = spec.levels.count - 1;
  let tunnellingHz: number[] | null = null;
  if (input.rabiKhz !== null) {
    conflict('levels', 'tunnelling', 'units.rabi_khz');
    const why =
      spec.levels.boundary === 'ring'
        ? `one per link of a ring of ${spec.levels.count} levels`
        : `one per link of ${spec.levels.count} levels`;
    tunnellingHz = perSlot(input.rabiKhz, links, 'units.rabi_khz', why).map(tunnellingHzFromRabi);
  }
  const exchange =
    input.dipoleDebye !== null
      ? exchangeHz(input.dipoleDebye, input.latticeSpacingNm as number, input.dipoleAngleDeg)
      : null;
  if (exchange !== null) conflict('exchange', 'strength', 'units.dipole_debye and units.lattice_spacing_nm');

  let energyUnitHz = input.energyUnitHz;
  if (energyUnitHz === null) {
    if (tunnellingHz !== null && tunnellingHz[0] !== 0) energyUnitHz = Math.abs(tunnellingHz[0]);
    else if (exchange !== null && exchange !== 0) energyUnitHz = Math.abs(exchange);
    else {
      throw new SpecError(
        'units.energy_unit_hz',
        'required when neither units.rabi_khz (link 0) nor units.dipole_debye gives a nonzero scale to measure energies in',
      );
    }
  }

  if (tunnellingHz !== null) spec.levels.tunnelling = tunnellingHz.map((j) => j / energyUnitHz);
  if (input.detuningKhz !== null) {
    conflict('levels', 'detuning', 'units.detuning_khz');
    spec.levels.detuning = perSlot(
      input.detuningKhz,
      spec.levels.count,
      'units.detuning_khz',
      `one per level of ${spec.levels.count}`,
    ).map((khz) => (khz * 1e3) / energyUnitHz);
  }
  if (exchange !== null) {
    spec.exchange.strength = exchange / energyUnitHz;
    if (!hasKey(raw, 'exchange', 'range')) spec.exchange.range = 'dipolar';
    if (!hasKey(raw, 'exchange', 'weights')) {
      // c_n = |<n|d_z|n+1>|^2 / |<0|d_z|1>|^2 from the angular-momentum algebra above.
      spec.exchange.weights = Array.from({ length: openLinks }, (_, n) => rotorLinkStrength(n) / rotorLinkStrength(0));
      spec.exchange.weightsName = 'rotor';
    }
  }
  const linkFrequenciesGhz =
    input.rotationalConstantGhz === null
      ? null
      : Array.from({ length: openLinks }, (_, n) => 2 * (input.rotationalConstantGhz as number) * (n + 1));

  const resolved: LabUnits = {
    input,
    energyUnitHz,
    timeUnitMs: timeUnitMs(energyUnitHz),
    exchangeHz: exchange,
    tunnellingHz,
    linkFrequenciesGhz,
  };
  spec.extra.units = resolved;
}

// ---------------------------------------------------------------------------------------------
// Text

/** Formats a frequency in Hz with a readable prefix. */
export function formatHz(hz: number): string {
  const a = Math.abs(hz);
  const [scale, unit] = a >= 1e9 ? [1e9, 'GHz'] : a >= 1e6 ? [1e6, 'MHz'] : a >= 1e3 ? [1e3, 'kHz'] : [1, 'Hz'];
  return `${Number((hz / scale).toPrecision(5))} ${unit}`;
}

/** Lines that say what one model unit is in the lab, and the couplings [units] produced. */
export function describeUnits(units: LabUnits): string[] {
  const lines = [
    `energy unit      1 = h x ${formatHz(units.energyUnitHz)}   time unit  1 = ${Number(units.timeUnitMs.toPrecision(5))} ms`,
  ];
  if (units.exchangeHz !== null) {
    lines.push(
      `exchange         V = ${formatHz(units.exchangeHz)} (${units.input.dipoleDebye} D at ${units.input.latticeSpacingNm} nm, ` +
        `${units.input.dipoleAngleDeg} deg to the chain)`,
    );
  }
  if (units.tunnellingHz !== null)
    lines.push(`tunnelling       J = ${units.tunnellingHz.map(formatHz).join(', ')} (half the Rabi frequency)`);
  if (units.linkFrequenciesGhz !== null) {
    lines.push(
      `microwaves       ${units.linkFrequenciesGhz.map((f) => formatHz(f * 1e9)).join(', ')} (rigid rotor, 2B(n+1) per link)`,
    );
  }
  return lines;
}

/** Energies of a solve in lab units, for the `units` block of `solve --json`. */
export function labEnergies(units: LabUnits, energies: number[], gap: number | null): Record<string, unknown> {
  return {
    energy_unit_hz: units.energyUnitHz,
    time_unit_ms: units.timeUnitMs,
    exchange_hz: units.exchangeHz,
    tunnelling_hz: units.tunnellingHz,
    energies_hz: energies.map((e) => e * units.energyUnitHz),
    gap_hz: gap === null ? null : gap * units.energyUnitHz,
  };
}

/** Lines for the readable `solve` output: the unit lines, then the energies in Hz. */
export function describeLabEnergies(units: LabUnits, energies: number[], gap: number | null): string[] {
  const lines = describeUnits(units);
  lines.push(
    `in the lab       E0 = ${formatHz(energies[0] * units.energyUnitHz)}` +
      (gap === null ? '' : `, gap = ${formatHz(gap * units.energyUnitHz)}`) +
      ' (times h)',
  );
  return lines;
}
