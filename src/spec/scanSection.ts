// The [scan] section of a spec, validated with the rest of the spec so that every process that
// reads specs knows it; expanding it into points is src/scan/plan.ts.
//
//   [scan]
//   zip = false                      # true: axes advance together (all the same length)
//   [[scan.axis]]
//   key = "exchange.strength"        # any spec key path, as for --set (levels.tunnelling[1] too)
//   from = 0.5                       # from/to/steps: `steps` evenly spaced values, ends included
//   to = 4.0
//   steps = 8
//   spacing = "linear"               # or "log" (geometric; from and to > 0)
//   [[scan.axis]]
//   key = "particles.kind"
//   values = ["pinned", "hardcore"]  # or an explicit list: numbers, strings, booleans or lists
//
// Each axis is checked here (its key path, its values, their count); whether a point is a valid
// spec is checked when the scan is expanded.

import { SpecError } from '../errors/errors.js';
import { describeValue, eitherOf, finiteNumber, isTable, orDefault, quoteText, rejectUnknownKeys } from './validate.js';

export type ScanValue = number | string | boolean | number[] | string[];

export interface ScanAxis {
  key: string;
  values: ScanValue[];
  /** How the values were given: "linear" or "log" (from/to/steps) or "values". */
  spacing: 'linear' | 'log' | 'values';
}

export interface ScanSection {
  axes: ScanAxis[];
  zip: boolean;
}

const AXIS_KEYS = ['key', 'values', 'from', 'to', 'steps', 'spacing'];

/**
 * Most points one scan may have. Every point is validated and sized before anything runs and
 * held in memory while the scan runs (`check` of 100,000 small points: about 8 s and 0.6 GB), and
 * each is a record in the run folder; a grid beyond this is a mistake (a stray exponent in
 * `steps`), not a study. Counted from the axes' lengths before any value is made.
 */
export const MAX_SCAN_POINTS = 100_000;

/** Removes rounding dust from computed axis values (0.30000000000000004 -> 0.3). */
function tidy(x: number): number {
  return Number(x.toPrecision(15));
}

function validateValue(value: unknown, path: string): ScanValue {
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new SpecError(path, `expected a finite number, got ${value}`);
    return value;
  }
  if (typeof value === 'string' || typeof value === 'boolean') return value;
  if (Array.isArray(value) && value.every((v) => typeof v === 'number' && Number.isFinite(v))) return value as number[];
  if (Array.isArray(value) && value.every((v) => typeof v === 'string')) return value;
  throw new SpecError(path, 'expected a number, a string, a boolean, or a list of numbers or of strings');
}

function validateAxis(value: unknown, path: string): ScanAxis {
  if (!isTable(value)) throw new SpecError(path, 'expected a table with key and values (or from/to/steps)');
  rejectUnknownKeys(value, path, AXIS_KEYS);
  const key = value.key;
  if (typeof key !== 'string' || key.trim() === '')
    throw new SpecError(`${path}.key`, 'required: the spec key path this axis sets, e.g. "exchange.strength"');
  if (!/^[A-Za-z_][A-Za-z0-9_-]*(\[\d+\])*(\.[A-Za-z_][A-Za-z0-9_-]*(\[\d+\])*)+$/.test(key)) {
    throw new SpecError(
      `${path}.key`,
      `${quoteText(key)} is not a key path of the form section.key (e.g. levels.count, levels.tunnelling[1])`,
    );
  }
  if (key.split('.')[0] === 'scan') throw new SpecError(`${path}.key`, 'an axis cannot scan the [scan] section itself');

  const hasRange = value.from !== undefined || value.to !== undefined || value.steps !== undefined;
  if (value.values !== undefined) {
    if (hasRange) throw new SpecError(path, 'give either values or from/to/steps, not both');
    if (value.spacing !== undefined) throw new SpecError(`${path}.spacing`, 'only applies to from/to/steps');
    if (!Array.isArray(value.values) || value.values.length === 0)
      throw new SpecError(`${path}.values`, 'expected a non-empty list');
    if (value.values.length > MAX_SCAN_POINTS) {
      throw new SpecError(
        `${path}.values`,
        `at most ${MAX_SCAN_POINTS} values on an axis (a scan has at most ${MAX_SCAN_POINTS} points), got ${value.values.length}`,
      );
    }
    return { key, values: value.values.map((v, i) => validateValue(v, `${path}.values[${i}]`)), spacing: 'values' };
  }
  if (!hasRange) throw new SpecError(path, 'needs values = [...] or from, to and steps');
  const number = (k: string): number => {
    if (value[k] === undefined) throw new SpecError(`${path}.${k}`, 'required with from/to/steps');
    return finiteNumber(value[k], `${path}.${k}`);
  };
  const from = number('from');
  const to = number('to');
  const steps = number('steps');
  if (!Number.isInteger(steps) || steps < 1)
    throw new SpecError(
      `${path}.steps`,
      `expected a positive integer (the number of values, ends included), got ${steps}`,
    );
  if (steps > MAX_SCAN_POINTS)
    throw new SpecError(
      `${path}.steps`,
      `at most ${MAX_SCAN_POINTS} values on an axis (a scan has at most ${MAX_SCAN_POINTS} points), got ${steps}`,
    );
  const spacing = eitherOf(orDefault(value.spacing, 'linear'), `${path}.spacing`, 'linear', 'log');
  if (steps === 1 && from !== to)
    throw new SpecError(
      `${path}.steps`,
      `one step cannot reach from = ${from} to = ${to}; use steps >= 2 or values = [${from}]`,
    );
  const values: number[] = [];
  if (spacing === 'log') {
    if (from <= 0 || to <= 0)
      throw new SpecError(`${path}.${from <= 0 ? 'from' : 'to'}`, 'log spacing needs from and to greater than 0');
    const ratio = Math.log(to / from);
    for (let k = 0; k < steps; k++)
      values.push(k === 0 ? from : k === steps - 1 ? to : tidy(from * Math.exp((ratio * k) / (steps - 1))));
  } else {
    for (let k = 0; k < steps; k++)
      values.push(k === 0 ? from : k === steps - 1 ? to : tidy(from + ((to - from) * k) / (steps - 1)));
  }
  return { key, values, spacing };
}

/** Validator of the [scan] section: axes expanded to their values, the grid size checked. */
export function validateScanSection(value: unknown, path: string): ScanSection {
  if (!isTable(value)) throw new SpecError(path, 'expected a table with [[scan.axis]] entries');
  rejectUnknownKeys(value, path, ['axis', 'zip']);
  const zip = value.zip === undefined ? false : value.zip;
  if (typeof zip !== 'boolean') throw new SpecError(`${path}.zip`, `expected true or false, got ${describeValue(zip)}`);
  const rawAxes = value.axis;
  if (rawAxes === undefined) throw new SpecError(`${path}.axis`, 'required: at least one [[scan.axis]]');
  const list = Array.isArray(rawAxes) ? rawAxes : [rawAxes];
  if (list.length === 0) throw new SpecError(`${path}.axis`, 'required: at least one [[scan.axis]]');
  const axes = list.map((a, i) => validateAxis(a, `${path}.axis[${i}]`));
  if (!zip) {
    // Multiplied axis by axis so the count never runs past the cap (or past exact integers).
    let count = 1;
    axes.forEach((a, i) => {
      count *= a.values.length;
      if (count > MAX_SCAN_POINTS) {
        const lengths = axes.map((b) => b.values.length).join(' x ');
        throw new SpecError(
          `${path}.axis[${i}]`,
          `the grid ${lengths} has more than ${MAX_SCAN_POINTS} points (the most one scan may have); split the scan or use zip = true`,
        );
      }
    });
  }
  const seen = new Map<string, number>();
  axes.forEach((a, i) => {
    if (seen.has(a.key))
      throw new SpecError(
        `${path}.axis[${i}].key`,
        `${quoteText(a.key)} is already scanned by ${path}.axis[${seen.get(a.key)}]`,
      );
    seen.set(a.key, i);
  });
  if (zip) {
    const n = axes[0].values.length;
    axes.forEach((a, i) => {
      if (a.values.length !== n) {
        throw new SpecError(
          `${path}.axis[${i}]`,
          `with zip = true every axis needs the same number of values: axis[0] has ${n}, this one ${a.values.length}`,
        );
      }
    });
  }
  return { axes, zip };
}
