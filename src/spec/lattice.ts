// The optional [lattice] section: where the molecules sit (issue 19). A chain is its 1D case; a
// spec with [lattice] needs no [chain].
//
//   key                default                      meaning
//   -----------------  ---------------------------  --------------------------------------------------------
//   lattice.shape      required                     "chain" | "ladder" | "square" | "triangular" | "custom"
//   lattice.size       required (not for custom)    chain [L]; ladder [L] or [L, legs] (legs 2); square
//                                                   [Lx, Ly] or [Lx, Ly, Lz] (cubic); triangular [Lx, Ly]
//   lattice.boundary   "open"                       "open" | "periodic", or one per direction (custom: open only)
//   lattice.spacing    1                            > 0, or one per direction (custom: per coordinate x, y, z)
//   lattice.positions  required for custom only     [[x, y], ...] or [[x, y, z], ...], in units of the spacing
//   lattice.bonds      nearest-neighbour pairs      [[i, j], ...]: hopping bonds (itinerant kinds only)
//   lattice.field      [0, 0, 1]                    quantization axis direction (normalized here)
//   lattice.vacancies  none                          [i, ...]: sites without a molecule (removed from the model)
//
// Sites are numbered row-major, x fastest: site = x + Lx (y + Ly z); custom sites in the order of
// `positions`. Indices in `bonds` and `vacancies` are these lattice indices. The model's sites are the
// lattice sites without the vacancies, renumbered in the same order. Positions are
// sum_d n_d spacing_d a_d with the primitive vectors a_d below; distances are in the unit in which
// exchange.strength is the coupling of two molecules at distance 1 perpendicular to the field.

import { SpecError } from '../errors/errors.js';
import type { ChainBoundary, Spec } from './specTypes.js';
import {
  describeValue,
  expectTable,
  finiteNumber,
  integerAtLeast,
  oneOf,
  orDefault,
  positiveNumber,
  rejectUnknownKeys,
  requiredKey,
  type Table,
} from './validate.js';

export type LatticeShape = 'chain' | 'ladder' | 'square' | 'triangular' | 'custom';
export const LATTICE_SHAPES: readonly LatticeShape[] = ['chain', 'ladder', 'square', 'triangular', 'custom'];

/** Most lattice sites a spec may describe: pair tables grow as sites^2, and no basis of more is solvable. */
export const MAX_LATTICE_SITES = 1024;

/** The validated [lattice] section, stored in spec.extra.lattice. */
export interface LatticeSpec {
  shape: LatticeShape;
  /** Sites per direction (custom: one direction holding every site, never periodic). */
  size: number[];
  boundary: ChainBoundary[];
  /** Per direction; for custom, per coordinate (x, y, z). */
  spacing: number[];
  /** Custom only: one [x, y, z] per site, in units of the spacing (z = 0 when given in 2D). */
  positions: number[][] | null;
  /** Custom hopping bonds as lattice indices, each [i, j] with i < j; null for nearest neighbours. */
  bonds: [number, number][] | null;
  /** Unit vector of the quantization axis. */
  field: [number, number, number];
  /** Lattice indices without a molecule, ascending. */
  vacancies: number[];
  /** Lattice sites, vacancies included. */
  latticeSites: number;
}

const LATTICE_KEYS = ['shape', 'size', 'boundary', 'spacing', 'positions', 'bonds', 'field', 'vacancies'];

/** Primitive vectors a_d of a shape's directions (custom has none: its positions are explicit). */
export function primitiveVectors(shape: LatticeShape, directions: number): number[][] {
  if (shape === 'triangular')
    return [
      [1, 0, 0],
      [0.5, Math.sqrt(3) / 2, 0],
    ];
  const unit = [
    [1, 0, 0],
    [0, 1, 0],
    [0, 0, 1],
  ];
  return unit.slice(0, directions);
}

/** The box vectors L_d spacing_d a_d of the periodic directions. */
export function periodicBoxes(lattice: LatticeSpec): number[][] {
  if (lattice.shape === 'custom') return [];
  const vectors = primitiveVectors(lattice.shape, lattice.size.length);
  const boxes: number[][] = [];
  lattice.size.forEach((n, d) => {
    if (lattice.boundary[d] === 'periodic') boxes.push(vectors[d].map((x) => x * n * lattice.spacing[d]));
  });
  return boxes;
}

/** A chain as the model uses it: shape "chain" without vacancies, where translations and cuts by position apply. */
export function isChainLattice(lattice: LatticeSpec): boolean {
  return lattice.shape === 'chain' && lattice.vacancies.length === 0;
}

/** The [chain] values a lattice stands for: a chain's own, else the molecule count on an open "chain" of sites. */
export function chainOfLattice(lattice: LatticeSpec): Spec['chain'] {
  if (isChainLattice(lattice)) return { sites: lattice.size[0], boundary: lattice.boundary[0] };
  return { sites: lattice.latticeSites - lattice.vacancies.length, boundary: 'open' };
}

function sizeOf(table: Table, shape: LatticeShape): number[] {
  const path = 'lattice.size';
  if (shape === 'custom') {
    if (table.size !== undefined)
      throw new SpecError(path, 'not used with shape = "custom" (lattice.positions gives the sites); remove it');
    return [];
  }
  const allowed: Record<Exclude<LatticeShape, 'custom'>, number[]> = {
    chain: [1],
    ladder: [1, 2],
    square: [2, 3],
    triangular: [2],
  };
  const lengths = allowed[shape];
  const raw = requiredKey(
    table,
    'lattice',
    'size',
    `sites per direction, e.g. ${shape === 'chain' ? '[8]' : '[4, 4]'}`,
  );
  const list = Array.isArray(raw) ? raw : typeof raw === 'number' && lengths.includes(1) ? [raw] : null;
  const wanted = lengths.map((n) => `${n} ${n === 1 ? 'number' : 'numbers'}`).join(' or ');
  if (list === null || !lengths.includes(list.length))
    throw new SpecError(path, `expected ${wanted} for shape = "${shape}", got ${describeValue(raw)}`);
  const size = list.map((v, i) => integerAtLeast(v, Array.isArray(raw) ? `${path}[${i}]` : path, 1));
  if (shape === 'ladder' && size.length === 1) size.push(2);
  return size;
}

function perDirection<T>(
  value: unknown,
  path: string,
  directions: number,
  read: (v: unknown, at: string) => T,
  what: string,
): T[] {
  if (!Array.isArray(value)) return new Array<T>(directions).fill(read(value, path));
  if (value.length !== directions)
    throw new SpecError(path, `expected one value or ${directions} (${what}), got a list of ${value.length}`);
  return value.map((v, i) => read(v, `${path}[${i}]`));
}

function pointList(value: unknown, path: string): number[][] {
  if (!Array.isArray(value) || value.length === 0)
    throw new SpecError(
      path,
      `expected a non-empty list of [x, y] or [x, y, z] positions, got ${describeValue(value)}`,
    );
  if (value.length > MAX_LATTICE_SITES)
    throw new SpecError(path, `at most ${MAX_LATTICE_SITES} sites, got ${value.length}`);
  let dimension = 0;
  return value.map((point, i) => {
    const at = `${path}[${i}]`;
    if (!Array.isArray(point) || (point.length !== 2 && point.length !== 3))
      throw new SpecError(at, `expected [x, y] or [x, y, z], got ${describeValue(point)}`);
    if (dimension === 0) dimension = point.length;
    if (point.length !== dimension)
      throw new SpecError(at, `every position needs ${dimension} coordinates, as ${path}[0] has; got ${point.length}`);
    const xyz = point.map((x, k) => finiteNumber(x, `${at}[${k}]`));
    if (xyz.length === 2) xyz.push(0);
    return xyz;
  });
}

function indexList(value: unknown, path: string, sites: number): number[] {
  if (!Array.isArray(value)) throw new SpecError(path, `expected a list of site indices, got ${describeValue(value)}`);
  const seen = new Set<number>();
  return value.map((v, i) => {
    const at = `${path}[${i}]`;
    const index = integerAtLeast(v, at, 0);
    if (index >= sites)
      throw new SpecError(at, `site ${index} does not exist: the lattice has ${sites} sites (0 to ${sites - 1})`);
    if (seen.has(index)) throw new SpecError(at, `site ${index} is listed twice`);
    seen.add(index);
    return index;
  });
}

function bondList(value: unknown, path: string, sites: number): [number, number][] {
  if (!Array.isArray(value))
    throw new SpecError(path, `expected a list of [i, j] site pairs, got ${describeValue(value)}`);
  const seen = new Set<string>();
  return value.map((pair, k) => {
    const at = `${path}[${k}]`;
    if (!Array.isArray(pair) || pair.length !== 2)
      throw new SpecError(at, `expected [i, j], got ${describeValue(pair)}`);
    const [a, b] = pair.map((v, e) => {
      const index = integerAtLeast(v, `${at}[${e}]`, 0);
      if (index >= sites)
        throw new SpecError(`${at}[${e}]`, `site ${index} does not exist: the lattice has ${sites} sites`);
      return index;
    });
    if (a === b) throw new SpecError(at, `a bond joins two different sites, got [${a}, ${b}]`);
    const bond: [number, number] = a < b ? [a, b] : [b, a];
    const key = bond.join(',');
    if (seen.has(key)) throw new SpecError(at, `the bond [${bond[0]}, ${bond[1]}] is listed twice`);
    seen.add(key);
    return bond;
  });
}

export function validateLatticeSection(raw: unknown, keyPath: string): LatticeSpec {
  const table = expectTable(raw, keyPath);
  rejectUnknownKeys(table, keyPath, LATTICE_KEYS);
  const shape = oneOf(requiredKey(table, keyPath, 'shape'), `${keyPath}.shape`, LATTICE_SHAPES);
  const size = sizeOf(table, shape);

  let positions: number[][] | null = null;
  let boundary: ChainBoundary[];
  let spacing: number[];
  let latticeSites: number;
  if (shape === 'custom') {
    positions = pointList(
      requiredKey(table, keyPath, 'positions', 'one [x, y] or [x, y, z] per site'),
      `${keyPath}.positions`,
    );
    latticeSites = positions.length;
    // A custom array has no box to wrap around.
    const b = orDefault(table.boundary, 'open');
    if (b !== 'open')
      throw new SpecError(`${keyPath}.boundary`, `shape = "custom" has open boundaries only, got ${describeValue(b)}`);
    boundary = [];
    spacing = perDirection(
      orDefault(table.spacing, 1),
      `${keyPath}.spacing`,
      3,
      positiveNumber,
      'one per coordinate x, y, z',
    );
  } else {
    if (table.positions !== undefined)
      throw new SpecError(`${keyPath}.positions`, `only for shape = "custom" (shape is "${shape}"); remove it`);
    latticeSites = size.reduce((a, b) => a * b, 1);
    if (latticeSites > MAX_LATTICE_SITES)
      throw new SpecError(`${keyPath}.size`, `at most ${MAX_LATTICE_SITES} sites, got ${latticeSites}`);
    const what = `one per direction of ${size.length}`;
    boundary = perDirection(
      orDefault(table.boundary, 'open'),
      `${keyPath}.boundary`,
      size.length,
      (v, at) => oneOf(v, at, ['open', 'periodic'] as const),
      what,
    );
    // A ladder's single boundary is along its legs: a "periodic ladder" is a ring of rungs.
    if (shape === 'ladder' && !Array.isArray(table.boundary)) boundary[1] = 'open';
    boundary.forEach((b, d) => {
      // Below 3 sites the wrap-around bond would repeat the open one (or join a site to itself).
      if (b === 'periodic' && size[d] < 3) {
        const list = JSON.stringify(boundary.map((x, e) => (e === d ? 'open' : x))).replace(/,/g, ', ');
        throw new SpecError(
          `${keyPath}.boundary`,
          `a periodic direction needs at least 3 sites, but direction ${d} has lattice.size[${d}] = ${size[d]}; give one boundary per direction, e.g. ${list}`,
        );
      }
    });
    spacing = perDirection(orDefault(table.spacing, 1), `${keyPath}.spacing`, size.length, positiveNumber, what);
  }

  const bonds = table.bonds === undefined ? null : bondList(table.bonds, `${keyPath}.bonds`, latticeSites);
  const fieldRaw = orDefault(table.field, [0, 0, 1]);
  if (!Array.isArray(fieldRaw) || fieldRaw.length !== 3)
    throw new SpecError(`${keyPath}.field`, `expected a direction [x, y, z], got ${describeValue(fieldRaw)}`);
  const f = fieldRaw.map((x, k) => finiteNumber(x, `${keyPath}.field[${k}]`));
  const norm = Math.hypot(f[0], f[1], f[2]);
  if (norm === 0) throw new SpecError(`${keyPath}.field`, 'a direction cannot be [0, 0, 0]');
  // The default [0, 0, 1] stays exact, so chains reproduce today's couplings bit for bit.
  const field: [number, number, number] = [f[0] / norm, f[1] / norm, f[2] / norm];
  const vacancies =
    table.vacancies === undefined
      ? []
      : indexList(table.vacancies, `${keyPath}.vacancies`, latticeSites).sort((a, b) => a - b);
  if (vacancies.length === latticeSites)
    throw new SpecError(`${keyPath}.vacancies`, `every one of the ${latticeSites} sites is vacant; leave at least one`);

  const lattice: LatticeSpec = { shape, size, boundary, spacing, positions, bonds, field, vacancies, latticeSites };
  if (positions) checkDistinctPositions(lattice, `${keyPath}.positions`);
  return lattice;
}

function checkDistinctPositions(lattice: LatticeSpec, path: string): void {
  const p = (lattice.positions as number[][]).map((xyz) => xyz.map((x, k) => x * lattice.spacing[k]));
  for (let i = 0; i < p.length; i++)
    for (let j = i + 1; j < p.length; j++)
      if (Math.hypot(p[i][0] - p[j][0], p[i][1] - p[j][1], p[i][2] - p[j][2]) === 0)
        throw new SpecError(`${path}[${j}]`, `sites ${i} and ${j} are at the same position`);
}

/** The validated lattice of a spec, or null without [lattice]. */
export function latticeOf(spec: Spec): LatticeSpec | null {
  const value = spec.extra.lattice;
  return value === undefined ? null : (value as LatticeSpec);
}

/**
 * The [chain] a spec with [lattice] stands for. With both sections they must describe the same chain
 * (shape "chain", same sites and boundary, no vacancies); the error names both.
 */
export function chainFromSections(chainValue: Spec['chain'] | null, lattice: LatticeSpec): Spec['chain'] {
  const implied = chainOfLattice(lattice);
  if (chainValue === null) return implied;
  const agrees =
    isChainLattice(lattice) && implied.sites === chainValue.sites && implied.boundary === chainValue.boundary;
  if (!agrees) {
    const latticeText = isChainLattice(lattice)
      ? `lattice.size = [${lattice.size[0]}], lattice.boundary = "${lattice.boundary[0]}"`
      : `lattice.shape = "${lattice.shape}"${lattice.vacancies.length > 0 ? ' with vacancies' : ''}`;
    throw new SpecError(
      'chain',
      `[chain] (chain.sites = ${chainValue.sites}, chain.boundary = "${chainValue.boundary}") and [lattice] (${latticeText}) describe different sites; give one of the two`,
    );
  }
  return chainValue;
}

/**
 * Checks that need the rest of the spec: the dipole angle comes from lattice.field, a cutoff fits in
 * half a periodic box, custom bonds need an itinerant kind, and position-based features (entanglement
 * cuts, translations, reflections) are used on chains only ("auto" entanglement computes no cut off a chain).
 */
export function resolveLattice(spec: Spec, raw: Record<string, unknown>): void {
  const lattice = latticeOf(spec);
  if (!lattice) return;
  const units = raw.units;
  if (typeof units === 'object' && units !== null && (units as Table).dipole_angle_deg !== undefined)
    throw new SpecError(
      'units.dipole_angle_deg',
      'with a [lattice] section the dipoles point along lattice.field, which sets the angle of every pair; remove units.dipole_angle_deg and set lattice.field',
    );
  const boxes = periodicBoxes(lattice);
  if (boxes.length > 0) {
    const half = Math.min(...boxes.map((b) => Math.hypot(b[0], b[1], b[2]))) / 2;
    for (const section of ['exchange', 'ising'] as const) {
      const cutoff = spec[section].cutoff;
      if (spec[section].range === 'dipolar' && Number.isFinite(cutoff) && cutoff > half)
        throw new SpecError(
          `${section}.cutoff`,
          `${cutoff} is beyond half the shortest periodic box (${half}): the minimum image would not be unique; use at most ${half}`,
        );
    }
  }
  if (lattice.bonds && spec.particles.kind === 'pinned')
    throw new SpecError(
      'lattice.bonds',
      'not used for kind = "pinned" (pinned particles never leave their site); remove it',
    );
  if (isChainLattice(lattice)) return;
  const entanglement = spec.solve.entanglement;
  if (entanglement !== 'auto' && entanglement !== 'none')
    throw new SpecError(
      'solve.entanglement',
      `cuts split a chain by site position, and this lattice (shape = "${lattice.shape}"${lattice.vacancies.length > 0 ? ', with vacancies' : ''}) is not a chain; remove the key`,
    );
  // "auto" means the half-chain cut where there is a chain; off a chain, no cut.
  spec.solve.entanglement = 'none';
  // Translations act on lattices with a periodic direction (the solver checks they commute);
  // reflections on chains only.
  const periodic = periodicBoxes(lattice).length > 0;
  const symmetries = spec.solve.symmetries;
  if (Array.isArray(symmetries))
    symmetries.forEach((name, i) => {
      if (name === 'reflection' || (name === 'translation' && !periodic))
        throw new SpecError(
          `solve.symmetries[${i}]`,
          name === 'translation'
            ? `translations need a periodic direction, and this lattice (shape = "${lattice.shape}") has none; remove it`
            : `${name} acts on chains only, and this lattice (shape = "${lattice.shape}") is not one; remove it`,
        );
    });
  if (spec.solve.sector.parity !== undefined)
    throw new SpecError(
      'solve.sector.parity',
      `parities label reflections, used on chains only, and this lattice (shape = "${lattice.shape}") is not one; remove it`,
    );
  const momentum = spec.solve.sector.momentum;
  if (momentum !== undefined) {
    if (!periodic)
      throw new SpecError(
        'solve.sector.momentum',
        `momenta label translations, and this lattice (shape = "${lattice.shape}") has no periodic direction; remove it`,
      );
    // A flat list of numbers is one lattice momentum [mx, my], not a list of chain momenta.
    const labels = momentum.every((m) => typeof m === 'number') ? [momentum] : momentum;
    spec.solve.sector.momentum = labels;
    labels.forEach((m, i) => {
      if (typeof m === 'number')
        throw new SpecError(
          `solve.sector.momentum[${i}]`,
          `a lattice momentum is a list [mx, my] with one entry per periodic direction, got ${m}`,
        );
    });
  }
}
