// What every plot of the report shares: its size and round tick values with their text.

/** Size of every plot's SVG viewBox. */
export const PLOT_WIDTH = 560;
export const PLOT_HEIGHT = 330;

/** A tick's text, with the decimals its step needs (exponent form for very large or small values). */
export function tickText(x: number, step: number): string {
  if (x === 0) return '0';
  const abs = Math.abs(x);
  if (abs >= 1e5 || abs < 1e-3)
    return x.toExponential(Math.max(0, Math.min(3, -Math.floor(Math.log10(step)) + Math.floor(Math.log10(abs)))));
  const decimals = Math.max(0, Math.min(8, -Math.floor(Math.log10(step) + 1e-9)));
  return x.toFixed(decimals);
}

/** About `count` round tick values covering [lo, hi] (steps of 1, 2 or 5 times a power of ten; common practice). */
export function niceTicks(
  lo: number,
  hi: number,
  count = 5,
): { ticks: number[]; step: number; lo: number; hi: number } {
  if (!(hi > lo)) {
    const pad = lo === 0 ? 1 : Math.abs(lo) * 0.1;
    lo -= pad;
    hi += pad;
  }
  const raw = (hi - lo) / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? 10 * power;
  const first = Math.ceil(lo / step - 1e-9) * step;
  const ticks: number[] = [];
  for (let t = first; t <= hi + step * 1e-9; t += step) ticks.push(Math.abs(t) < step * 1e-9 ? 0 : t);
  return { ticks, step, lo, hi };
}

/**
 * Relative tolerance on the steps of log(value) when judging an axis geometric: axis values are
 * stored to 15 significant digits (tidied), so rounding leaves about 1e-15; a hand-typed
 * "geometric" list (0.1, 0.2, 0.4, 0.8) is exact to that too.
 */
const GEOMETRIC_TOLERANCE = 1e-6;

/**
 * Whether sorted distinct values are all positive with one ratio between neighbours (to rounding),
 * and not also evenly spaced: at least three values, as two have both a constant ratio and a
 * constant difference. A scan whose values are both (a ratio so close to 1 that rounding cannot
 * tell) stays linear.
 */
export function isGeometric(values: readonly number[]): boolean {
  const sorted = [...new Set(values)].sort((a, b) => a - b);
  if (sorted.length < 3 || !sorted.every((v) => v > 0 && Number.isFinite(v))) return false;
  const logSteps = sorted.slice(1).map((v, i) => Math.log(v / sorted[i]));
  const diffs = sorted.slice(1).map((v, i) => v - sorted[i]);
  const constant = (steps: number[]) => {
    const mean = steps.reduce((a, b) => a + b, 0) / steps.length;
    return steps.every((s) => Math.abs(s - mean) <= GEOMETRIC_TOLERANCE * Math.abs(mean));
  };
  return constant(logSteps) && !constant(diffs);
}

/**
 * Tick values of a log axis over [lo, hi] (both > 0): the powers of ten inside, every second or more
 * when they are many; when fewer than two fall inside, 1, 2 and 5 times them, then every integer
 * multiple, then round linear ticks (common practice for log axes).
 */
export function logTicks(lo: number, hi: number, count = 6): number[] {
  if (!(lo > 0) || !(hi >= lo)) throw new Error(`logTicks needs 0 < lo <= hi, got ${lo}, ${hi}`);
  // Rounding in the ends (0.30000000000000004) must not drop a tick on an end.
  const inside = (t: number) => t >= lo * (1 - 1e-9) && t <= hi * (1 + 1e-9);
  const first = Math.floor(Math.log10(lo));
  const last = Math.ceil(Math.log10(hi));
  const decades: number[] = [];
  for (let e = first; e <= last; e++) decades.push(e);
  const power = (e: number) => Number(`1e${e}`);
  const within = decades.map(power).filter(inside);
  if (within.length >= 2) {
    const every = Math.ceil(within.length / count);
    const exponents = decades.filter((e) => inside(power(e)));
    return exponents.filter((e) => e % every === 0).map(power);
  }
  for (const multiples of [
    [1, 2, 5],
    [1, 2, 3, 4, 5, 6, 7, 8, 9],
  ]) {
    const ticks = decades.flatMap((e) => multiples.map((m) => Number(`${m}e${e}`))).filter(inside);
    if (ticks.length >= 2) return ticks;
  }
  return niceTicks(lo, hi, 3).ticks.filter((t) => t > 0 && inside(t));
}

/**
 * Keys of the scan axes the report draws on a log scale: given with `spacing = "log"`, or with
 * numeric values that are geometric (`isGeometric`); a manifest from before `spacing` was kept has
 * only the values.
 */
export function logScaleAxes(axes: readonly { key: string; values: readonly unknown[]; spacing?: string }[]): string[] {
  return axes
    .filter((a) => {
      const numeric = a.values.every((v): v is number => typeof v === 'number');
      if (!numeric || !a.values.every((v) => (v as number) > 0)) return false;
      return a.spacing === 'log' || isGeometric(a.values as number[]);
    })
    .map((a) => a.key);
}
