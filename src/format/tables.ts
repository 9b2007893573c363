// Text for people and shells: aligned tables of numbers, CSV fields, quoted shell words.

export function fmt(x: number | null | undefined, digits = 10): string {
  if (x === null || x === undefined) return '-';
  if (!Number.isFinite(x)) return String(x);
  if (x !== 0 && (Math.abs(x) < 1e-4 || Math.abs(x) >= 1e7)) return x.toExponential(3);
  return Number(x.toPrecision(digits)).toString();
}

/**
 * A value at most this fraction of its column's scale (its largest magnitude, or the natural scale of
 * the quantity) is rounding noise of double arithmetic, not a value: readable tables print it as 0.
 * JSON and CSV keep every number as computed.
 */
export const ROUNDING_ZERO = 1e-12;

/** The largest finite magnitude among the values (0 when there is none). */
export function columnScale(values: Iterable<number | null | undefined>, atLeast = 0): number {
  let scale = atLeast;
  for (const v of values) if (typeof v === 'number' && Number.isFinite(v)) scale = Math.max(scale, Math.abs(v));
  return scale;
}

/** fmt, but 0 for a value that is rounding noise against `scale` (see ROUNDING_ZERO). */
export function fmtNoise(x: number | null | undefined, scale: number, digits = 10): string {
  if (typeof x === 'number' && Math.abs(x) <= ROUNDING_ZERO * scale) return '0';
  return fmt(x, digits);
}

/** "1 step", "2 steps". */
export function plural(count: number, word: string, many = `${word}s`): string {
  return `${count} ${count === 1 ? word : many}`;
}

/** A small positive bound or residual in exponent form; exactly zero as 0. */
export function fmtSmall(x: number, digits = 2): string {
  return x === 0 ? '0' : x.toExponential(digits);
}

/** One CSV field: empty for null, quoted when it holds a comma, a quote or a line break (RFC 4180). */
export function csvCell(value: unknown): string {
  if (value === null || value === undefined) return '';
  const text =
    typeof value === 'string'
      ? value
      : typeof value === 'number' || typeof value === 'boolean'
        ? String(value)
        : JSON.stringify(value);
  return /[",\n\r]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** A header line and one line per row, each ending in a newline. */
export function csv(header: string[], rows: unknown[][]): string {
  return [header.map(csvCell).join(','), ...rows.map((r) => r.map(csvCell).join(','))].join('\n') + '\n';
}

/** A word as a POSIX shell reads it back unchanged: bare when safe, else single-quoted. */
export function shellQuote(word: string): string {
  return /^[A-Za-z0-9_./=:,@%+-]+$/.test(word) ? word : `'${word.replace(/'/g, `'\\''`)}'`;
}

/** A command to print: how the program is started, then the arguments quoted for a POSIX shell. */
export function shellCommand(program: string, args: string[]): string {
  return [program, ...args.map(shellQuote)].join(' ');
}

/** Left column left-aligned, the rest right-aligned, columns separated by two spaces. */
export function table(header: string[], rows: string[][]): string {
  const widths = header.map((h, c) => Math.max(h.length, ...rows.map((r) => (r[c] ?? '').length)));
  const line = (cells: string[]) =>
    cells
      .map((cell, c) => (c === 0 ? cell.padEnd(widths[c]) : cell.padStart(widths[c])))
      .join('  ')
      .trimEnd();
  return [line(header), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n');
}

/** A dimension as a person reads it: exact while it is an exact integer, then in powers of ten. */
export function describeDimension(dimension: number): string {
  if (Number.isSafeInteger(dimension)) return String(dimension);
  if (Number.isFinite(dimension)) return `about ${dimension.toExponential(3)} (too large to build)`;
  return 'beyond 1e308 (too large to build)';
}
