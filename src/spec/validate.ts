// The spec validator kit: typed readers shared by every section's validator, core and optional
// alike, so the same mistake reads the same in every section. Each reader names the key path it
// reads in its SpecError, and shows user values cut to a readable length.

import { SpecError } from '../errors/errors.js';

export type Table = Record<string, unknown>;

export function isTable(value: unknown): value is Table {
  return typeof value === 'object' && value !== null && !Array.isArray(value) && !(value instanceof Date);
}

// Only a missing key takes the default: JSON null is a wrong value, as it has no TOML counterpart.
export function orDefault(value: unknown, fallback: unknown): unknown {
  return value === undefined ? fallback : value;
}

/** `table[key]`, which must be present; `hint` says what to give when it is not. */
export function requiredKey(table: Table, path: string, key: string, hint?: string): unknown {
  if (table[key] === undefined)
    throw new SpecError(`${path}.${key}`, hint ? `required key is missing (${hint})` : 'required key is missing');
  return table[key];
}

export function expectTable(value: unknown, path: string): Table {
  if (!isTable(value)) throw new SpecError(path, `expected a table, got ${describeValue(value)}`);
  return value;
}

export function rejectUnknownKeys(table: Table, section: string, known: readonly string[]): void {
  for (const key of Object.keys(table)) {
    if (!known.includes(key)) throw unknownKeyError(section, key, known);
  }
}

/**
 * The error for a key no section knows, in every section alike: the key path, the nearest known
 * key when one is close, and the valid keys. `section` is the table's key path ('' for the top
 * level, whose keys are sections).
 */
export function unknownKeyError(section: string, key: string, known: readonly string[]): SpecError {
  const guess = closestName(key, known);
  const path = section ? `${section}.${keyForPath(key)}` : keyForPath(key);
  const what = section ? 'key' : 'section';
  return new SpecError(
    path,
    `unknown ${what}${guess ? ` (did you mean ${guess}?)` : ''}; valid ${what}s: ${known.join(', ')}`,
  );
}

/** A key (or key path) as an error names it: plain names as they are, anything else quoted and cut. */
export function keyForPath(key: string): string {
  return /^[A-Za-z0-9_.[\]-]{1,60}$/.test(key) ? key : quoteText(key);
}

export function finiteNumber(value: unknown, path: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new SpecError(path, `expected a finite number, got ${describeValue(value)}`);
  }
  return value;
}

export function positiveNumber(value: unknown, path: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value) || value <= 0) {
    throw new SpecError(path, `expected a positive number, got ${describeValue(value)}`);
  }
  return value;
}

/** A finite number >= 0; anything else that is not a finite number is refused as such. */
export function nonNegativeNumber(value: unknown, path: string): number {
  const x = finiteNumber(value, path);
  if (x < 0) throw new SpecError(path, `expected a number >= 0, got ${x}`);
  return x;
}

export function positiveInteger(value: unknown, path: string): number {
  if (typeof value !== 'number' || !Number.isSafeInteger(value) || value < 1) {
    throw new SpecError(path, `expected a positive integer, got ${describeValue(value)}`);
  }
  return value;
}

export function nonNegativeInteger(value: unknown, path: string): number {
  if (typeof value !== 'number' || !Number.isSafeInteger(value) || value < 0) {
    throw new SpecError(path, `expected a non-negative integer, got ${describeValue(value)}`);
  }
  return value;
}

export function integerAtLeast(value: unknown, path: string, least: number): number {
  if (typeof value !== 'number' || !Number.isSafeInteger(value) || value < least) {
    throw new SpecError(path, `expected an integer >= ${least}, got ${describeValue(value)}`);
  }
  return value;
}

export function integerList(value: unknown, path: string, least = 0): number[] {
  if (!Array.isArray(value)) throw new SpecError(path, `expected a list of integers, got ${describeValue(value)}`);
  return value.map((v, i) => integerAtLeast(v, `${path}[${i}]`, least));
}

export function oneOf<const T extends string>(
  value: unknown,
  path: string,
  options: readonly T[],
  alternative?: string,
): T {
  if (typeof value === 'string' && (options as readonly string[]).includes(value)) return value as T;
  const listed = options.map((o) => `"${o}"`).join(', ');
  const guess = typeof value === 'string' ? closestName(value, options) : undefined;
  throw new SpecError(
    path,
    `expected one of ${listed}${alternative ? ` ${alternative}` : ''}, got ${describeValue(value)}${guess ? ` (did you mean "${guess}"?)` : ''}`,
  );
}

/** One of exactly two strings, named as such (no list, no guess). */
export function eitherOf<const A extends string, const B extends string>(
  value: unknown,
  path: string,
  first: A,
  second: B,
): A | B {
  if (value === first || value === second) return value as A | B;
  throw new SpecError(path, `expected "${first}" or "${second}", got ${describeValue(value)}`);
}

/** A scalar applied to every slot, or a list of exactly `length` finite numbers. */
export function numberOrList(value: unknown, path: string, length: number, why: string): number[] {
  if (Array.isArray(value)) return numberList(value, path, length, why);
  if (typeof value !== 'number') {
    throw new SpecError(path, `expected a number or a list of ${length} numbers (${why}), got ${describeValue(value)}`);
  }
  return new Array<number>(length).fill(finiteNumber(value, path));
}

export function numberList(values: unknown[], path: string, length: number, why: string): number[] {
  if (values.length !== length) {
    throw new SpecError(path, `expected ${length} ${length === 1 ? 'value' : 'values'} (${why}), got ${values.length}`);
  }
  return values.map((v, i) => finiteNumber(v, `${path}[${i}]`));
}

/** How a value looks in an error message. */
export function describeValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'null';
  if (typeof value === 'string') return quoteText(value);
  if (typeof value === 'number') {
    if (Number.isNaN(value)) return 'nan';
    if (!Number.isFinite(value)) return value > 0 ? 'inf' : '-inf';
    return String(value);
  }
  if (typeof value === 'boolean') return String(value);
  if (value instanceof Date) return 'a date';
  if (Array.isArray(value)) return `a list of ${value.length}`;
  if (isTable(value)) return 'a table';
  return typeof value;
}

/** Longest user text an error message repeats: enough to recognise it, short enough for one line. */
export const MESSAGE_TEXT_LIMIT = 60;

/** A user-supplied text cut for an error message, saying how long it was when cut. */
export function cutText(text: string, limit = MESSAGE_TEXT_LIMIT): string {
  return text.length <= limit ? text : `${headOf(text, limit)}... (${text.length} characters)`;
}

/** A user-supplied string as an error message shows it: quoted, escaped to one line, cut when long. */
export function quoteText(text: string, limit = MESSAGE_TEXT_LIMIT): string {
  return text.length <= limit
    ? JSON.stringify(text)
    : `${JSON.stringify(headOf(text, limit))}... (${text.length} characters)`;
}

function headOf(text: string, limit: number): string {
  const head = text.slice(0, limit - 3);
  // Never leave half of a surrogate pair at the cut.
  return /[\uD800-\uDBFF]$/.test(head) ? head.slice(0, -1) : head;
}

/** The known name a typo most likely meant, if any is close enough. */
function closestName(word: string, known: readonly string[]): string | undefined {
  // A word this long is no typo of a key, and the edit distance would cost its length times each key's.
  if (word.length > 100) return undefined;
  const squash = (s: string): string => s.toLowerCase().replace(/[_\-\s]/g, '');
  // maxPerSite, max-per-site, MAX_PER_SITE all mean max_per_site.
  const sameWord = known.find((k) => squash(k) === squash(word));
  if (sameWord) return sameWord;
  let best: string | undefined;
  let bestDistance = Infinity;
  for (const candidate of known) {
    const distance = editDistance(word.toLowerCase(), candidate.toLowerCase());
    if (distance < bestDistance && distance <= Math.max(1, Math.floor(candidate.length / 3))) {
      best = candidate;
      bestDistance = distance;
    }
  }
  return best;
}

// Optimal string alignment distance: Levenshtein plus the swap of two neighbours, the commonest typo.
function editDistance(a: string, b: string): number {
  let beforePrevious: number[] = [];
  let previous = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const current = [i];
    for (let j = 1; j <= b.length; j++) {
      current[j] = Math.min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1])
        current[j] = Math.min(current[j], beforePrevious[j - 2] + 1);
    }
    beforePrevious = previous;
    previous = current;
  }
  return previous[b.length];
}
