// The geometry of docs/model.md "[lattice]" written out for tests, sharing no code with src/: site
// positions in the documented order (row-major, x fastest; vacancies removed), the minimum image
// with tied images averaging 1 - 3 cos^2 theta, pair factors V (1 - 3 cos^2 theta) / r^3 from the
// issue's formula, nearest bonds; a ModelDescription for the dense build of
// tests/support/occupationReference.ts, and random small lattices of every shape.
import type { Kind, ModelDescription } from './occupationReference.js';

export interface LatticeRaw {
  shape: 'ladder' | 'square' | 'triangular' | 'custom';
  size?: number[];
  boundary?: string[];
  spacing?: number[];
  positions?: number[][];
  bonds?: [number, number][];
  field?: number[];
  vacancies?: number[];
}

/** Site positions by the documented order (row-major, x fastest) and primitive vectors, vacancies removed. */
export function referenceSites(l: LatticeRaw): { xyz: number[][]; kept: number[]; boxes: number[][] } {
  const spacing = l.spacing ?? [1, 1, 1];
  const all: number[][] = [];
  const boxes: number[][] = [];
  if (l.shape === 'custom') {
    for (const p of l.positions ?? []) all.push([p[0] * spacing[0], p[1] * spacing[1], (p[2] ?? 0) * spacing[2]]);
  } else {
    const size = l.shape === 'ladder' && l.size?.length === 1 ? [l.size[0], 2] : (l.size as number[]);
    const [a1, a2] =
      l.shape === 'triangular'
        ? [
            [1, 0],
            [0.5, Math.sqrt(3) / 2],
          ]
        : [
            [1, 0],
            [0, 1],
          ];
    for (let y = 0; y < size[1]; y++)
      for (let x = 0; x < size[0]; x++)
        all.push([x * spacing[0] * a1[0] + y * spacing[1] * a2[0], x * spacing[0] * a1[1] + y * spacing[1] * a2[1], 0]);
    const vectors = [a1, a2];
    size.forEach((n, d) => {
      if ((l.boundary ?? ['open', 'open'])[d] === 'periodic')
        boxes.push([n * spacing[d] * vectors[d][0], n * spacing[d] * vectors[d][1], 0]);
    });
  }
  const vacant = new Set(l.vacancies ?? []);
  const kept = all.map((_, s) => s).filter((s) => !vacant.has(s));
  return { xyz: kept.map((s) => all[s]), kept, boxes };
}

/** Shortest image of b - a over shifts n1 B1 + n2 B2, n in {-1, 0, 1}; tied images average 1 - 3 cos^2. */
export function referencePair(
  a: number[],
  b: number[],
  boxes: number[][],
  field: number[],
): { r: number; ang: number } {
  let shifts = [[0, 0, 0]];
  for (const B of boxes) shifts = shifts.flatMap((s) => [-1, 0, 1].map((n) => s.map((x, c) => x + n * B[c])));
  const images = shifts.map((s) => [b[0] - a[0] + s[0], b[1] - a[1] + s[1], b[2] - a[2] + s[2]]);
  const lengths = images.map((d) => Math.hypot(d[0], d[1], d[2]));
  const r = Math.min(...lengths);
  const norm = Math.hypot(field[0], field[1], field[2]);
  const tied = images.filter((_, k) => lengths[k] - r <= 1e-9 * r);
  const ang =
    tied.reduce((sum, d) => {
      const c = (d[0] * field[0] + d[1] * field[1] + d[2] * field[2]) / (r * norm);
      return sum + 1 - 3 * c * c;
    }, 0) / tied.length;
  return { r, ang };
}

export function describeCase(spec: Record<string, any>, kind: Kind): ModelDescription {
  const lattice = spec.lattice as LatticeRaw;
  const { xyz, kept, boxes } = referenceSites(lattice);
  const L = xyz.length;
  const field = lattice.field ?? [0, 0, 1];
  const pair = (i: number, j: number) => referencePair(xyz[i], xyz[j], boxes, field);
  let shortest = Infinity;
  for (let i = 0; i < L; i++) for (let j = i + 1; j < L; j++) shortest = Math.min(shortest, pair(i, j).r);
  const factors = (range: string, cutoff: number | undefined) =>
    Array.from({ length: L }, (_, i) =>
      Array.from({ length: L }, (_, j) => {
        if (j <= i) return 0;
        const { r: d, ang } = pair(i, j);
        const inRange = range === 'nearest' ? d - shortest <= 1e-9 * shortest : cutoff === undefined || d <= cutoff;
        return inRange ? ang / d ** 3 : 0;
      }),
    );
  const index = new Map(kept.map((s, k) => [s, k]));
  const bonds: [number, number][] = [];
  if (lattice.bonds) {
    for (const [a, b] of lattice.bonds)
      if (index.has(a) && index.has(b)) bonds.push([index.get(a) as number, index.get(b) as number]);
  } else
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++) if (pair(i, j).r - shortest <= 1e-9 * shortest) bonds.push([i, j]);
  const N = spec.levels.count as number;
  const p = spec.particles ?? {};
  return {
    sites: L,
    periodic: false,
    levels: N,
    ring: spec.levels.boundary === 'ring',
    tunnelling: spec.levels.tunnelling,
    phase: spec.levels.phase,
    detuning: spec.levels.detuning,
    exchange: spec.exchange.strength,
    exchangeRange: spec.exchange.range,
    exchangeCutoff: spec.exchange.cutoff ?? null,
    weights: new Array<number>(N - 1).fill(1),
    ising: spec.ising.strength,
    moments: spec.ising.moments,
    isingRange: spec.ising.range,
    isingCutoff: spec.ising.cutoff ?? null,
    kind,
    particles: kind === 'pinned' ? L : p.number,
    hopping: kind === 'pinned' ? 0 : (p.hopping ?? 0),
    maxPerSite: kind === 'boson' ? (p.max_per_site ?? p.number) : 1,
    onsite: kind === 'boson' ? (p.onsite ?? 0) : 0,
    exchangeFactors: factors(spec.exchange.range, spec.exchange.cutoff),
    isingFactors: factors(spec.ising.range, spec.ising.cutoff),
    bonds,
  };
}

export function randomLattice(shape: LatticeRaw['shape'], r: () => number, small: boolean): LatticeRaw {
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const pick = <T>(xs: T[]): T => xs[Math.floor(r() * xs.length)];
  // [1, 1, 1] puts separations along x or y at the magic angle (cos^2 = 1/3): those couplings vanish.
  const field = pick([
    [0, 0, 1],
    [u(-1, 1), u(-1, 1), u(-1, 1)],
    [1, 0, 0],
    [1, 1, 1],
  ]);
  let lattice: LatticeRaw;
  if (shape === 'custom') {
    const count = small ? 3 : 3 + Math.floor(r() * 3);
    const positions: number[][] = [];
    while (positions.length < count) {
      const p = [u(0, 2.5), u(0, 2.5), r() < 0.3 ? u(0, 1) : 0];
      if (positions.every((q) => Math.hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]) > 0.6)) positions.push(p);
    }
    lattice = { shape, positions, field };
    if (r() < 0.5) {
      const bonds: [number, number][] = [];
      for (let i = 0; i < count; i++) for (let j = i + 1; j < count; j++) if (r() < 0.5) bonds.push([i, j]);
      if (bonds.length > 0) lattice.bonds = bonds;
    }
  } else {
    // At most 6 sites: the dense reference stays small.
    const lx = small ? 2 : pick([2, 3]);
    const ly = shape === 'ladder' || small || lx === 3 ? 2 : pick([2, 3]);
    lattice = {
      shape,
      size: shape === 'ladder' ? [lx] : [lx, ly],
      boundary: [lx === 3 && r() < 0.6 ? 'periodic' : 'open', ly === 3 && r() < 0.6 ? 'periodic' : 'open'],
      spacing: r() < 0.5 ? [1, 1] : [u(0.8, 1.3), u(0.8, 1.3)],
      field,
    };
    const sites = lx * ly;
    if (r() < 0.5 && sites > 3) lattice.vacancies = [Math.floor(r() * sites)];
  }
  return lattice;
}
