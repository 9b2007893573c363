// Thinning long lines and many lines so that large scans stay light.

/** Vertices of one drawn line at most. */
export const MAX_POINTS = 400;

/** Keeps the first, last, smallest and largest of each bucket so peaks survive thinning. */
export function decimate(x: number[], y: number[], maxPoints = MAX_POINTS): { x: number[]; y: number[] } {
  const n = x.length;
  if (n <= maxPoints) return { x, y };
  const buckets = Math.max(1, Math.floor(maxPoints / 4));
  const size = Math.ceil(n / buckets);
  const keep = new Set<number>();
  for (let start = 0; start < n; start += size) {
    const end = Math.min(n, start + size);
    let lo = start;
    let hi = start;
    for (let k = start; k < end; k++) {
      if (y[k] < y[lo]) lo = k;
      if (y[k] > y[hi]) hi = k;
    }
    keep
      .add(start)
      .add(lo)
      .add(hi)
      .add(end - 1);
  }
  const order = [...keep].sort((a, b) => a - b);
  return { x: order.map((k) => x[k]), y: order.map((k) => y[k]) };
}

/** At most `max` items, evenly spread and always including the first and last. */
export function evenlyChosen<T>(items: T[], max: number): T[] {
  if (items.length <= max) return items;
  const out: T[] = [];
  for (let k = 0; k < max; k++) out.push(items[Math.round((k * (items.length - 1)) / (max - 1))]);
  return out;
}
