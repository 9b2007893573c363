// The random start vectors of the finite-temperature Lanczos method and the jackknife over its
// rounds, shared by thermal equilibrium (src/thermal/lanczos.ts) and finite-temperature spectra
// (src/spectrum/): the same seed, block and round give the same vector in both.

/** Seeded generator (mulberry32): reproducible random vectors per block and round. */
export function generator(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** The generator's seed for one block and round of a run seeded `seed`. */
export function mix(seed: number, block: number, round: number): number {
  let h = (seed * 0x9e3779b1) ^ (block * 0x85ebca6b) ^ (round * 0xc2b2ae35);
  h = Math.imul(h ^ (h >>> 16), 0x7feb352d);
  h = Math.imul(h ^ (h >>> 15), 0x846ca68b);
  return (h ^ (h >>> 16)) >>> 0;
}

/**
 * Fills r (length d, or 2d interleaved complex) with unit-modulus entries, so E[r r^+] = 1: random
 * signs for a real block, random phases for a complex one.
 */
export function fillRandom(r: Float64Array, d: number, isComplex: boolean, rand: () => number): void {
  if (isComplex) {
    for (let a = 0; a < d; a++) {
      const phase = 2 * Math.PI * rand();
      r[2 * a] = Math.cos(phase);
      r[2 * a + 1] = Math.sin(phase);
    }
  } else for (let a = 0; a < d; a++) r[a] = rand() < 0.5 ? -1 : 1;
}

/** The jackknife standard error from the leave-one-out values (common practice for ratios of sums over rounds). */
export function jackknifeError(leaveOneOut: ArrayLike<number>): number {
  const R = leaveOneOut.length;
  if (R < 2) return 0;
  let avg = 0;
  for (let i = 0; i < R; i++) avg += leaveOneOut[i];
  avg /= R;
  let sum = 0;
  for (let i = 0; i < R; i++) sum += (leaveOneOut[i] - avg) ** 2;
  return Math.sqrt(((R - 1) / R) * sum);
}
