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
