// Seeded pseudo-random numbers and random model specs for comparisons against reference solvers.

export function rng(seed: number): () => number {
  // mulberry32: small, fast, good enough for test inputs
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A pinned spec with every term switched on and random couplings. */
export function randomPinnedSpec(seed: number, sites: number, levels: number): Record<string, any> {
  const r = rng(seed);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const ring = levels >= 3 && r() < 0.5;
  const links = ring ? levels : levels - 1;
  const periodic = sites >= 3 && r() < 0.5;
  return {
    chain: { sites, boundary: periodic ? 'periodic' : 'open' },
    levels: {
      count: levels,
      boundary: ring ? 'ring' : 'open',
      tunnelling: Array.from({ length: links }, () => u(0.2, 1.5)),
      phase: Array.from({ length: links }, () => u(-Math.PI, Math.PI)),
      detuning: Array.from({ length: levels }, () => u(-1, 1)),
    },
    exchange: {
      strength: u(0.3, 3),
      ...(r() < 0.5 ? { range: 'nearest' } : { range: 'dipolar', cutoff: r() < 0.5 ? 2 : undefined }),
      weights: r() < 0.5 ? 'rotor' : Array.from({ length: levels - 1 }, () => u(0.5, 1.5)),
    },
    ising: {
      strength: u(-1, 1),
      moments: Array.from({ length: levels }, () => u(-1, 1)),
      range: r() < 0.5 ? 'nearest' : 'dipolar',
    },
    solve: { states: 4, tolerance: 1e-10 },
  };
}

/** Drops keys whose value is undefined (specs reject nothing-values). */
export function clean<T>(x: T): T {
  return JSON.parse(JSON.stringify(x));
}
