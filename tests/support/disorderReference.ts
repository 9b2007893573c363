// Disorder realizations written from docs/model.md ("Disorder") alone, sharing no code with src/:
// splitmix64 on two 32-bit halves (src uses BigInt), the documented stream keys, uniforms and
// Box-Muller Gaussians, the documented draw indices, and the realized chain as a ModelDescription for
// the dense build of tests/support/occupationReference.ts.
import type { Kind, ModelDescription } from './occupationReference.js';

type U64 = { hi: number; lo: number };

const GAMMA: U64 = { hi: 0x9e3779b9, lo: 0x7f4a7c15 };

const fromNumber = (n: number): U64 => ({ hi: Math.floor(n / 2 ** 32) >>> 0, lo: n >>> 0 });
const xor = (a: U64, b: U64): U64 => ({ hi: (a.hi ^ b.hi) >>> 0, lo: (a.lo ^ b.lo) >>> 0 });
function add(a: U64, b: U64): U64 {
  const lo = (a.lo + b.lo) >>> 0;
  const carry = lo < a.lo ? 1 : 0;
  return { hi: (a.hi + b.hi + carry) >>> 0, lo };
}
function shr(a: U64, k: number): U64 {
  return { hi: a.hi >>> k, lo: ((a.lo >>> k) | (a.hi << (32 - k))) >>> 0 };
}
/** The low 64 bits of a * b, schoolbook on 16-bit limbs. */
function mul(a: U64, b: U64): U64 {
  const x = [a.lo & 0xffff, a.lo >>> 16, a.hi & 0xffff, a.hi >>> 16];
  const y = [b.lo & 0xffff, b.lo >>> 16, b.hi & 0xffff, b.hi >>> 16];
  const out = [0, 0, 0, 0];
  for (let i = 0; i < 4; i++) {
    let carry = 0;
    for (let j = 0; i + j < 4; j++) {
      const t = out[i + j] + x[i] * y[j] + carry;
      out[i + j] = t % 65536;
      carry = Math.floor(t / 65536);
    }
  }
  return { hi: (out[2] + out[3] * 65536) >>> 0, lo: (out[0] + out[1] * 65536) >>> 0 };
}

/** splitmix64(z) = finalize(z + gamma), docs/model.md (Steele, Lea and Flood 2014's constants). */
export function splitmix(z: U64): U64 {
  let x = add(z, GAMMA);
  x = mul(xor(x, shr(x, 30)), { hi: 0xbf58476d, lo: 0x1ce4e5b9 });
  x = mul(xor(x, shr(x, 27)), { hi: 0x94d049bb, lo: 0x133111eb });
  return xor(x, shr(x, 31));
}

export const STREAM = { filling: 1, tunnelling: 2, phase: 3, detuning: 4, exchange: 5 } as const;

export function key(seed: number, r: number, stream: number): U64 {
  return splitmix(xor(splitmix(xor(splitmix(fromNumber(seed)), fromNumber(r))), fromNumber(stream)));
}

export function uniform(k: U64, index: number): number {
  const z = splitmix(add(k, mul(fromNumber(index), GAMMA)));
  const top = shr(z, 11);
  return (top.hi * 2 ** 32 + top.lo) / 2 ** 53;
}

export function gaussian(k: U64, index: number): number {
  const u1 = uniform(k, 2 * index);
  const u2 = uniform(k, 2 * index + 1);
  return Math.sqrt(-2 * Math.log(1 - u1)) * Math.cos(2 * Math.PI * u2);
}

export interface NoiseRaw {
  relative?: number;
  absolute?: number;
  correlation?: string;
}

export interface DisorderRaw {
  realizations: number;
  seed?: number;
  filling?: number;
  tunnelling?: NoiseRaw;
  phase?: NoiseRaw;
  detuning?: NoiseRaw;
  exchange?: NoiseRaw;
}

const perturb = (x: number, n: NoiseRaw, g: number): number =>
  n.relative !== undefined ? x * (1 + n.relative * g) : x + (n.absolute as number) * g;

/**
 * Realization r of a raw chain spec (`chain`, `levels`, `exchange`, `ising`, `particles`) as the
 * dense build reads it, and the realized values the record must hold.
 */
export function realizeChain(
  spec: Record<string, any>,
  disorder: DisorderRaw,
  r: number,
): { model: ModelDescription; kept: number[]; particles: number } {
  const seed = disorder.seed ?? 1;
  const L0 = spec.chain.sites as number;
  const periodic = spec.chain.boundary === 'periodic';
  const kind = (spec.particles?.kind ?? 'pinned') as Kind;
  const N = spec.levels.count as number;
  const ring = spec.levels.boundary === 'ring';
  const links = ring ? N : N - 1;
  const perLink = (v: unknown, fill: number): number[] =>
    Array.isArray(v) ? (v as number[]) : new Array<number>(links).fill((v as number | undefined) ?? fill);
  const tunnelling = perLink(spec.levels.tunnelling, 1);
  const phase = perLink(spec.levels.phase, 0);
  const detuning = Array.isArray(spec.levels.detuning)
    ? (spec.levels.detuning as number[])
    : new Array<number>(N).fill(spec.levels.detuning ?? 0);
  // Filling: uniform a of stream 1 below f fills lattice site a; none filled keeps the smallest u.
  const f = disorder.filling ?? 1;
  let filledSites = Array.from({ length: L0 }, (_, a) => a);
  if (f < 1) {
    const k = key(seed, r, STREAM.filling);
    const u = filledSites.map((a) => uniform(k, a));
    filledSites = filledSites.filter((a) => u[a] < f);
    if (filledSites.length === 0) filledSites = [u.indexOf(Math.min(...u))];
  }
  const kept = kind === 'pinned' ? filledSites : Array.from({ length: L0 }, (_, a) => a);
  const particles = kind === 'pinned' ? kept.length : f < 1 ? filledSites.length : (spec.particles?.number ?? L0);
  const L = kept.length;
  const draws = (term: keyof typeof STREAM) => {
    const k = key(seed, r, STREAM[term]);
    return (index: number) => gaussian(k, index);
  };
  const siteValues = (term: 'tunnelling' | 'phase' | 'detuning', clean: number[], fallback: string): number[][] => {
    const n = disorder[term];
    const g = n ? draws(term) : null;
    return kept.map((a) =>
      clean.map((x, slot) => {
        if (!n || !g) return x;
        const c = n.correlation ?? fallback;
        const index = c === 'common' ? 0 : c === 'per_site' ? a : a * clean.length + slot;
        return perturb(x, n, g(index));
      }),
    );
  };
  // Pair factors on the chain with vacancies: r = |a - b| (the shorter way on a ring), f = 1/r^3,
  // "nearest" the pairs at the shortest separation of the remaining sites.
  const dist = (a: number, b: number) => (periodic ? Math.min(Math.abs(a - b), L0 - Math.abs(a - b)) : Math.abs(a - b));
  let shortest = Infinity;
  for (let i = 0; i < L; i++) for (let j = i + 1; j < L; j++) shortest = Math.min(shortest, dist(kept[i], kept[j]));
  const factors = (section: Record<string, any> | undefined) =>
    kept.map((a, i) =>
      kept.map((b, j) => {
        if (j <= i) return 0;
        const d = dist(a, b);
        const range = section?.range ?? 'nearest';
        const inRange = range === 'nearest' ? d === shortest : section?.cutoff === undefined || d <= section.cutoff;
        return inRange ? 1 / d ** 3 : 0;
      }),
    );
  const exchangeFactors = factors(spec.exchange);
  const V = spec.exchange?.strength ?? 0;
  const exNoise = disorder.exchange;
  const gEx = exNoise ? draws('exchange') : null;
  const pairIndex = (a: number, b: number) => a * L0 - (a * (a + 1)) / 2 + (b - a - 1);
  const exchangeValues = exchangeFactors.map((row, i) =>
    row.map((fij, j) => {
      const v = V * fij;
      if (j <= i || v === 0 || !exNoise || !gEx) return v;
      return perturb(
        v,
        exNoise,
        gEx((exNoise.correlation ?? 'per_pair') === 'common' ? 0 : pairIndex(kept[i], kept[j])),
      );
    }),
  );
  const w = spec.exchange?.weights;
  const weights =
    w === 'rotor'
      ? Array.from({ length: N - 1 }, (_, n) => (3 * (n + 1) ** 2) / ((2 * n + 1) * (2 * n + 3)))
      : Array.isArray(w)
        ? (w as number[])
        : new Array<number>(N - 1).fill(1);
  const bonds: [number, number][] = [];
  for (let i = 0; i + 1 < L; i++) bonds.push([i, i + 1]);
  if (periodic && L >= 3) bonds.push([0, L - 1]);
  const p = spec.particles ?? {};
  const model: ModelDescription = {
    sites: L,
    periodic: false,
    levels: N,
    ring,
    tunnelling,
    phase,
    detuning,
    exchange: V,
    exchangeRange: spec.exchange?.range ?? 'nearest',
    exchangeCutoff: spec.exchange?.cutoff ?? null,
    weights,
    ising: spec.ising?.strength ?? 0,
    moments: spec.ising?.moments ?? new Array<number>(N).fill(0),
    isingRange: spec.ising?.range ?? 'nearest',
    isingCutoff: spec.ising?.cutoff ?? null,
    kind,
    particles,
    hopping: kind === 'pinned' ? 0 : (p.hopping ?? 0),
    maxPerSite: kind === 'boson' ? Math.min(p.max_per_site ?? particles, particles) : 1,
    onsite: kind === 'boson' ? (p.onsite ?? 0) : 0,
    exchangeFactors,
    isingFactors: factors(spec.ising),
    bonds,
    siteTunnelling: siteValues('tunnelling', tunnelling, 'per_link'),
    sitePhase: siteValues('phase', phase, 'per_link'),
    siteDetuning: siteValues('detuning', detuning, 'per_level'),
    exchangeValues,
  };
  return { model, kept, particles };
}
