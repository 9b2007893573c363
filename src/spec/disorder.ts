// The optional [disorder] section (issue 20): realizations of an imperfect array, each a pure
// function of (seed, realization). Partial filling is resolved here (it changes the sites and the
// particle number, which the rest of the spec must see); the noise on the couplings is drawn when the
// model is built (src/model/disorder.ts), from the same counter-based generator.
//
//   key                              default       meaning
//   -------------------------------  ------------  -----------------------------------------------------
//   disorder.realizations            required      R >= 1: a scan over realizations 0 .. R-1
//   disorder.seed                    1             integer >= 0
//   disorder.realization             none          this realization only (what a scan point sets); 0..R-1
//   disorder.filling                 1             0 < f <= 1: each site holds a molecule with probability f
//   disorder.<term>.relative         -             Gaussian width relative to the clean value: x (1 + w g)
//   disorder.<term>.absolute         -             Gaussian width, absolute: x + w g   (exactly one of the two)
//   disorder.<term>.correlation      see below     which entries share one draw
//
// <term> is tunnelling, phase (per link), detuning (per level) or exchange (per pair). Correlations:
// "common" (one draw for the whole realization), "per_site" (one per site, shared by its links or
// levels), "per_link" (tunnelling and phase: one per site and link; their default), "per_level"
// (detuning: one per site and level; its default), "per_pair" (exchange: one per pair; its default).
//
// The generator. splitmix64(z) = finalize(z + 0x9e3779b97f4a7c15) with splitmix64's finalizer, all mod
// 2^64. A realization's stream for a term is key = splitmix64(splitmix64(splitmix64(seed) xor r) xor s),
// s = 1 filling, 2 tunnelling, 3 phase, 4 detuning, 5 exchange. Its uniform k is
// u(k) = (splitmix64(key + k * 0x9e3779b97f4a7c15) >> 11) / 2^53 in [0, 1), and its Gaussian k is
// Box-Muller's sqrt(-2 ln(1 - u(2k))) cos(2 pi u(2k+1)). Each entry reads the draw of a fixed index,
// so no draw depends on the order of work, the workers or the shards (see docs/model.md for the
// indices).

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import { latticeOf, type LatticeSpec } from './lattice.js';
import { MAX_SCAN_POINTS, type ScanSection } from './scanSection.js';
import {
  describeValue,
  expectTable,
  finiteNumber,
  nonNegativeInteger,
  oneOf,
  orDefault,
  positiveInteger,
  rejectUnknownKeys,
  requiredKey,
} from './validate.js';

export type NoiseCorrelation = 'common' | 'per_site' | 'per_link' | 'per_level' | 'per_pair';
export type NoiseTerm = 'tunnelling' | 'phase' | 'detuning' | 'exchange';
export const NOISE_TERMS: readonly NoiseTerm[] = ['tunnelling', 'phase', 'detuning', 'exchange'];

export interface NoiseSpec {
  width: number;
  mode: 'relative' | 'absolute';
  correlation: NoiseCorrelation;
}

/** What a realization's filling decided (pinned kinds lose the empty sites; itinerant kinds keep them). */
export interface FillingDraw {
  /** Lattice indices drawn empty (pinned: now vacancies; itinerant: only counted). */
  empty: number[];
  /** The particle number of the realization. */
  particles: number;
}

/** The validated [disorder] section, stored in spec.extra.disorder. */
export interface DisorderSpec {
  realizations: number;
  seed: number;
  /** The realization this spec is (set by a scan point or --set), null for the ensemble's base spec. */
  realization: number | null;
  filling: number;
  noise: Partial<Record<NoiseTerm, NoiseSpec>>;
  /** Set by resolve for a realization with filling < 1. */
  filled?: FillingDraw;
}

/** Most realizations one spec may ask for (each is a scan point; see MAX_SCAN_POINTS). */
export const MAX_REALIZATIONS = 100_000;

const CORRELATIONS: Record<NoiseTerm, readonly NoiseCorrelation[]> = {
  tunnelling: ['common', 'per_site', 'per_link'],
  phase: ['common', 'per_site', 'per_link'],
  detuning: ['common', 'per_site', 'per_level'],
  exchange: ['common', 'per_pair'],
};
const DEFAULT_CORRELATION: Record<NoiseTerm, NoiseCorrelation> = {
  tunnelling: 'per_link',
  phase: 'per_link',
  detuning: 'per_level',
  exchange: 'per_pair',
};
/** Stream numbers s of the generator, one per kind of draw. */
export const STREAMS = { filling: 1n, tunnelling: 2n, phase: 3n, detuning: 4n, exchange: 5n } as const;

export function validateDisorderSection(value: unknown, keyPath: string): DisorderSpec {
  const table = expectTable(value, keyPath);
  rejectUnknownKeys(table, keyPath, ['realizations', 'seed', 'realization', 'filling', ...NOISE_TERMS]);
  const realizations = positiveInteger(requiredKey(table, keyPath, 'realizations'), `${keyPath}.realizations`);
  if (realizations > MAX_REALIZATIONS)
    throw new SpecError(`${keyPath}.realizations`, `at most ${MAX_REALIZATIONS}, got ${realizations}`);
  const seed = nonNegativeInteger(orDefault(table.seed, 1), `${keyPath}.seed`);
  if (seed > Number.MAX_SAFE_INTEGER)
    throw new SpecError(`${keyPath}.seed`, `at most ${Number.MAX_SAFE_INTEGER}, got ${seed}`);
  let realization: number | null = null;
  if (table.realization !== undefined) {
    realization = nonNegativeInteger(table.realization, `${keyPath}.realization`);
    if (realization >= realizations)
      throw new SpecError(
        `${keyPath}.realization`,
        `${realization} is not one of the ${realizations} realizations (0 .. ${realizations - 1})`,
      );
  }
  const filling = finiteNumber(orDefault(table.filling, 1), `${keyPath}.filling`);
  if (!(filling > 0 && filling <= 1))
    throw new SpecError(`${keyPath}.filling`, `expected a probability 0 < f <= 1, got ${describeValue(filling)}`);
  const noise: DisorderSpec['noise'] = {};
  for (const term of NOISE_TERMS) {
    if (table[term] === undefined) continue;
    const path = `${keyPath}.${term}`;
    const entry = expectTable(table[term], path);
    rejectUnknownKeys(entry, path, ['relative', 'absolute', 'correlation']);
    if ((entry.relative === undefined) === (entry.absolute === undefined))
      throw new SpecError(path, 'give exactly one of relative or absolute (the Gaussian width)');
    const mode = entry.relative !== undefined ? 'relative' : 'absolute';
    const width = finiteNumber(entry[mode], `${path}.${mode}`);
    if (width < 0) throw new SpecError(`${path}.${mode}`, `a width is >= 0, got ${width}`);
    const correlation = oneOf(orDefault(entry.correlation, DEFAULT_CORRELATION[term]), `${path}.correlation`, [
      ...CORRELATIONS[term],
    ]);
    noise[term] = { width, mode, correlation };
  }
  return { realizations, seed, realization, filling, noise };
}

/** The validated [disorder] of a spec, or null without one. */
export function disorderOf(spec: Spec): DisorderSpec | null {
  return (spec.extra.disorder as DisorderSpec | undefined) ?? null;
}

/**
 * A realization's filling, written into the core spec: pinned kinds get the empty sites as
 * vacancies (a [chain] becomes a lattice of shape "chain"); itinerant kinds keep every site and
 * take the number of filled sites as particles.number. When the draw leaves no site filled, the
 * site whose draw came closest to filling (smallest u) keeps its molecule. The base spec of an
 * ensemble (no realization) stands for realization 0.
 */
export function resolveDisorder(spec: Spec): void {
  const disorder = disorderOf(spec);
  if (!disorder) return;
  if (disorder.realization === null) addRealizationAxis(spec, disorder.realizations);
  const r = disorder.realization ?? 0;
  const pinned = spec.particles.kind === 'pinned';
  if (disorder.filling < 1 && pinned) refuseWithVacancies(spec);
  if (disorder.filling >= 1) return;
  const lattice: LatticeSpec = latticeOf(spec) ?? {
    shape: 'chain',
    size: [spec.chain.sites],
    boundary: [spec.chain.boundary],
    spacing: [1],
    positions: null,
    bonds: null,
    field: [0, 0, 1],
    vacancies: [],
    latticeSites: spec.chain.sites,
  };
  const key = streamKey(disorder.seed, r, STREAMS.filling);
  const present = new Set(lattice.vacancies);
  const empty: number[] = [];
  let filled = 0;
  let closest = -1;
  let closestU = Infinity;
  for (let site = 0; site < lattice.latticeSites; site++) {
    if (present.has(site)) continue;
    const u = uniform(key, site);
    if (u < disorder.filling) filled++;
    else empty.push(site);
    if (u < closestU) {
      closestU = u;
      closest = site;
    }
  }
  if (filled === 0) {
    empty.splice(empty.indexOf(closest), 1);
    filled = 1;
  }
  disorder.filled = { empty, particles: filled };
  if (!pinned && spec.extra.evolve !== undefined)
    throw new SpecError(
      'disorder.filling',
      'itinerant kinds take their particle number from the filling, which no evolve.initial can match in every realization; evolve realizations with filling = 1, or pinned molecules',
    );
  if (!pinned) {
    spec.particles.number = filled;
    if (spec.particles.kind === 'boson') spec.particles.maxPerSite = Math.min(spec.particles.maxPerSite, filled);
    return;
  }
  if (empty.length === 0) return;
  const vacancies = [...lattice.vacancies, ...empty].sort((a, b) => a - b);
  spec.extra.lattice = { ...lattice, vacancies };
  spec.chain = { sites: lattice.latticeSites - vacancies.length, boundary: 'open' };
  spec.particles.number = spec.chain.sites;
  spec.particles.maxPerSite = 1;
  dropEmptySitesFromEvolve(spec, lattice, empty);
  // "auto" means the half-chain cut where there is a chain; with vacancies there is none.
  if (spec.solve.entanglement === 'auto') spec.solve.entanglement = 'none';
}

/** The scan key of the realization axis: a scan point sets `disorder.realization`. */
export const REALIZATION_KEY = 'disorder.realization';

/**
 * The ensemble as a scan: an axis over the realizations, innermost but one (so warm starts chain
 * along the user's innermost axis within one realization), or the only axis without [scan]. A
 * scan that sets disorder.realization itself keeps its own axes.
 */
function addRealizationAxis(spec: Spec, realizations: number): void {
  const axis = {
    key: REALIZATION_KEY,
    values: Array.from({ length: realizations }, (_, r) => r),
    spacing: 'values' as const,
  };
  const scan = spec.extra.scan as ScanSection | undefined;
  if (!scan) {
    spec.extra.scan = { axes: [axis], zip: false } satisfies ScanSection;
    return;
  }
  if (scan.axes.some((a) => a.key === REALIZATION_KEY)) return;
  if (scan.zip)
    throw new SpecError(
      'scan.zip',
      'realizations form a grid axis beside the scanned ones, and zipped axes have no grid; remove zip or [disorder]',
    );
  const points = scan.axes.reduce((n, a) => n * a.values.length, realizations);
  if (points > MAX_SCAN_POINTS)
    throw new SpecError(
      'disorder.realizations',
      `${realizations} realizations of ${points / realizations} scan points make ${points} points, more than the ${MAX_SCAN_POINTS} one scan may have`,
    );
  scan.axes.splice(scan.axes.length - 1, 0, axis);
}

/**
 * [evolve] of a pinned ensemble gives its initial levels and pulse sites per site of the full chain
 * (lattice index); a realization keeps those of its filled sites, renumbered as the model's sites.
 */
function dropEmptySitesFromEvolve(spec: Spec, lattice: LatticeSpec, empty: number[]): void {
  const evolve = spec.extra.evolve as
    { initial: { kind: string; levels?: number[] | null; pulses?: { sites: number[] | null }[] } } | undefined;
  if (!evolve || evolve.initial.kind !== 'levels') return;
  const gone = new Set(empty);
  const vacant = new Set(lattice.vacancies);
  // Model site of each site the evolve section numbered (the lattice's sites without its own vacancies).
  const before = Array.from({ length: lattice.latticeSites }, (_, a) => a).filter((a) => !vacant.has(a));
  const renumber = new Map<number, number>();
  let next = 0;
  before.forEach((a, i) => {
    if (!gone.has(a)) renumber.set(i, next++);
  });
  const initial = evolve.initial;
  if (initial.levels) initial.levels = initial.levels.filter((_, i) => renumber.has(i));
  for (const pulse of initial.pulses ?? [])
    if (pulse.sites) pulse.sites = pulse.sites.filter((i) => renumber.has(i)).map((i) => renumber.get(i) as number);
}

/** What needs a full chain cannot be asked of an ensemble whose realizations lose sites. */
function refuseWithVacancies(spec: Spec): void {
  const why = 'disorder.filling < 1 removes sites from pinned chains, which then are no chains';
  const e = spec.solve.entanglement;
  if (e !== 'auto' && e !== 'none' && spec.solve.entanglementSites.length === 0)
    throw new SpecError('solve.entanglement', `cuts by position need a full chain and ${why}; remove the key`);
  if (spec.solve.entanglementSites.length > 0)
    throw new SpecError('solve.entanglement', `site lists name model sites, and ${why}; remove the key`);
  if (Array.isArray(spec.solve.symmetries) && spec.solve.symmetries.includes('reflection'))
    throw new SpecError('solve.symmetries', `the reflection needs a full chain and ${why}; remove it`);
  if (spec.solve.sector.parity !== undefined)
    throw new SpecError('solve.sector.parity', `parities need a full chain and ${why}; remove it`);
}

// ---------------------------------------------------------------------------------------------
// The counter-based generator (see the header)

const MASK = (1n << 64n) - 1n;
const GAMMA = 0x9e3779b97f4a7c15n;

/** splitmix64: one step from state z (its output for state z + gamma). */
export function splitmix64(z: bigint): bigint {
  let x = (z + GAMMA) & MASK;
  x = ((x ^ (x >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK;
  x = ((x ^ (x >> 27n)) * 0x94d049bb133111ebn) & MASK;
  return x ^ (x >> 31n);
}

/** The key of realization r's stream s under `seed`. */
export function streamKey(seed: number, realization: number, stream: bigint): bigint {
  return splitmix64(splitmix64(splitmix64(BigInt(seed)) ^ BigInt(realization)) ^ stream);
}

/** Uniform k of a stream, in [0, 1) with 53 random bits. */
export function uniform(key: bigint, k: number): number {
  return Number(splitmix64((key + BigInt(k) * GAMMA) & MASK) >> 11n) / 2 ** 53;
}

/** Standard normal k of a stream (Box-Muller on uniforms 2k and 2k+1). */
export function gaussian(key: bigint, k: number): number {
  const u1 = uniform(key, 2 * k);
  const u2 = uniform(key, 2 * k + 1);
  return Math.sqrt(-2 * Math.log(1 - u1)) * Math.cos(2 * Math.PI * u2);
}
