// Model specs: reading TOML/JSON files, command-line overrides, and validation into a typed Spec.
//
// Defaults (file keys are snake_case; the Spec object uses camelCase):
//
//   key                      required  default
//   -----------------------  --------  -------------------------------------------------
//   chain.sites              yes       -                   (unless [lattice] describes the sites: src/spec/lattice.ts)
//   chain.boundary                     "open"              ("open" | "periodic")
//   levels.count             yes       -
//   levels.boundary                    "open"              ("open" | "ring")
//   levels.tunnelling                  1 on every link     (number or one per link)
//   levels.phase                       0 on every link     (radians; number or one per link)
//   levels.detuning                    0 on every level    (number or one per level)
//   [exchange] (optional)
//   exchange.strength                  0
//   exchange.range                     "nearest"           ("nearest" | "dipolar")
//   exchange.cutoff                    none (Infinity)     (dipolar only)
//   exchange.weights                   "uniform"           ("uniform" | "rotor" | one per open link)
//   [ising] (optional)
//   ising.strength                     0
//   ising.moments                      all 0               (one per level; required if strength != 0)
//   ising.range                        "nearest"
//   ising.cutoff                       none (Infinity)     (dipolar only)
//   [particles] (optional)
//   particles.kind                     "pinned"            ("pinned" | "hardcore" | "boson" | "fermion")
//   particles.number                   chain.sites
//   particles.max_per_site             number (boson); 1 (pinned, hardcore); levels.count (fermion)
//   particles.hopping                  0                   (not for pinned)
//   particles.onsite                   0                   (boson only)
//   particles.<kind>.<key>             (none)              the keys above but kind, for that kind only, over [particles]
//   [solve] (optional)
//   solve.states                       4
//   solve.tolerance                    1e-9
//   solve.max_matvecs                  none (null)
//   solve.krylov                       none (null)
//   solve.seed                         1
//   solve.symmetries                   "auto"              ("auto" | "none" | list of translation, reflection, level_flip, charge, point_group, automorphism)
//   solve.sector                       every sector        (table: momentum, parity, level_flip, charge, point_group; a value or a list each)
//   solve.threads                      "auto"              (threads for one matrix-vector product, or a count)
//   solve.entanglement                 "auto"              ("none" | "auto" | "half" | "all" | list of cuts;
//                                                           a cut l splits sites 0..l-1 from l..L-1; "auto"
//                                                           is the half chain when its smaller side has at
//                                                           most 256 states; see src/observables/entanglement.ts;
//                                                           or a list of site lists, each a subsystem A on any
//                                                           geometry: solve.entanglementSites)
//   solve.observables                  "ground"            ("ground": observables of the ground level; "each": also
//                                                           every solved state's own, in its sector; see src/solver/levels.ts)
//
// The optional top-level sections ([lattice], [units], [evolve], [scan], [disorder]) are listed in src/spec/sections.ts;
// their validated values land in spec.extra.

import { readFileSync } from 'node:fs';
import { extname } from 'node:path';
import { parse as parseToml, TomlError } from 'smol-toml';
import { InputError, SpecError } from '../errors/errors.js';
import { JsonReadError, lineAndColumn, parseJsonStrict } from './json.js';
import {
  describeValue,
  expectTable,
  finiteNumber,
  isTable,
  keyForPath,
  nonNegativeInteger,
  numberList,
  numberOrList,
  oneOf,
  orDefault,
  positiveInteger,
  positiveNumber,
  quoteText,
  rejectUnknownKeys,
  requiredKey,
  type Table,
} from './validate.js';
import { chainFromSections, validateLatticeSection } from './lattice.js';
import { OPTIONAL_SECTIONS } from './sections.js';
import type { ExchangeWeightsName, InteractionRange, ParticleKind, Spec } from './specTypes.js';

export type {
  ChainBoundary,
  ExchangeWeightsName,
  InteractionRange,
  LevelBoundary,
  ParticleKind,
  Spec,
  SymmetryChoice,
} from './specTypes.js';

/** Sections validated here; the optional ones come from src/spec/sections.ts. */
export const CORE_SECTIONS = ['chain', 'levels', 'exchange', 'ising', 'particles', 'solve'] as const;

// ---------------------------------------------------------------------------------------------
// Reading text and files

/** Parses spec text into a raw tree; syntax errors become InputError with line/column when known. */
export function parseSpecText(
  text: string,
  format: 'toml' | 'json',
  sourceName = `<${format} text>`,
): Record<string, unknown> {
  let tree: unknown;
  if (format === 'toml') {
    try {
      tree = parseToml(text);
    } catch (e) {
      if (e instanceof TomlError) {
        // smol-toml's message is "Invalid TOML document: <what>\n\n<code excerpt>"; errors are one
        // line, so the excerpt becomes the offending line quoted after the headline.
        const headline = e.message.replace(/^Invalid TOML document:\s*/, '').split('\n')[0];
        const source = text.split(/\r?\n/)[e.line - 1]?.trim();
        const quoted = source
          ? ` (line ${e.line}: ${JSON.stringify(source.length > 80 ? `${source.slice(0, 77)}...` : source)})`
          : '';
        throw new InputError(`${sourceName}:${e.line}:${e.column}: invalid TOML: ${headline}${quoted}`);
      }
      throw new InputError(`${sourceName}: invalid TOML: ${errorText(e)}`);
    }
  } else {
    try {
      tree = parseJsonStrict(text);
    } catch (e) {
      if (!(e instanceof JsonReadError)) throw e;
      const at = (offset: number): string => {
        const { line, column } = lineAndColumn(text, offset);
        return `${line}:${column}`;
      };
      if (e.duplicate) {
        const path = formatPath(e.duplicate.path);
        throw new InputError(
          `${sourceName}:${at(e.offset)}: ${path} is given twice (first at ${at(e.duplicate.firstOffset)}); a key may appear once`,
        );
      }
      throw new InputError(`${sourceName}:${at(e.offset)}: invalid JSON: ${e.problem}`);
    }
    if (!isTable(tree)) {
      throw new InputError(`${sourceName}: a spec must be a JSON object of sections, got ${describeValue(tree)}`);
    }
  }
  return tree as Record<string, unknown>;
}

/** Reads a spec file, choosing the parser by extension (.toml or .json). */
export function loadSpecFile(path: string): Record<string, unknown> {
  const extension = extname(path).toLowerCase();
  if (extension !== '.toml' && extension !== '.json') {
    throw new InputError(`${path}: cannot tell the spec format from the extension "${extension}"; use .toml or .json`);
  }
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read spec file ${path}: ${fileErrorText(e)}`);
  }
  return parseSpecText(text, extension === '.toml' ? 'toml' : 'json', path);
}

/** Reads a spec file, applies `key.path=value` overrides in order, and validates the result. */
export function loadSpec(path: string, overrides: string[] = []): { raw: Record<string, unknown>; spec: Spec } {
  const raw = loadSpecFile(path);
  for (const assignment of overrides) applyOverride(raw, assignment);
  return { raw, spec: validateSpec(raw) };
}

function errorText(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

function fileErrorText(e: unknown): string {
  const code = typeof e === 'object' && e !== null && 'code' in e ? e.code : undefined;
  switch (code) {
    case 'ENOENT':
      return 'no such file';
    case 'EACCES':
      return 'permission denied';
    case 'EISDIR':
      return 'it is a directory';
    default:
      return errorText(e);
  }
}

// ---------------------------------------------------------------------------------------------
// Command-line overrides

type PathStep = string | number;

// Keys that would reach Object.prototype instead of the spec tree.
const FORBIDDEN_KEYS = new Set(['__proto__', 'prototype', 'constructor']);

/**
 * Applies one `key.path=value` assignment to a raw tree, in place. The value is JSON when it
 * parses as JSON, else a bare string (so `particles.kind=hardcore` works unquoted). Missing
 * tables are created; `a.b[2]=x` replaces one element of an existing array; the value `null`
 * removes the key, restoring its default. Validation happens later, in validateSpec.
 */
export function applyOverride(raw: Record<string, unknown>, assignment: string): void {
  const equals = assignment.indexOf('=');
  if (equals < 0) {
    throw new InputError(`override ${quoteText(assignment)}: expected key.path=value, e.g. exchange.strength=2.5`);
  }
  const steps = parseOverridePath(assignment.slice(0, equals).trim(), assignment);
  const valueText = assignment.slice(equals + 1).trim();
  if (valueText === '') throw new InputError(`override ${quoteText(assignment)}: no value after "="`);
  const value = parseOverrideValue(valueText, assignment);

  let container: Table | unknown[] = raw;
  for (let i = 0; i < steps.length; i++) {
    const step = steps[i];
    const isLast = i === steps.length - 1;
    const here = formatPath(steps.slice(0, i + 1));
    if (typeof step === 'number') {
      // parseOverridePath guarantees an index follows a key, and the walk below guarantees the
      // container is then an array.
      const list = container as unknown[];
      if (step >= list.length) {
        throw new SpecError(
          here,
          `cannot apply override ${quoteText(assignment)}: index ${step} is past the end of a list of ${list.length}`,
        );
      }
      if (isLast) {
        if (value === null)
          throw new SpecError(
            here,
            `cannot apply override ${quoteText(assignment)}: a single list element cannot be removed`,
          );
        list[step] = value;
        return;
      }
      container = descend(list[step], steps[i + 1], here, assignment);
    } else {
      const table = container as Table;
      if (isLast) {
        if (value === null) delete table[step];
        else table[step] = value;
        return;
      }
      if (!Object.hasOwn(table, step) && typeof steps[i + 1] === 'string') table[step] = {};
      container = descend(table[step], steps[i + 1], here, assignment);
    }
  }
}

function descend(child: unknown, next: PathStep, here: string, assignment: string): Table | unknown[] {
  if (typeof next === 'number') {
    if (Array.isArray(child)) return child as unknown[];
    throw new SpecError(
      here,
      `cannot apply override ${quoteText(assignment)}: ${here} is ${describeValue(child)}, not a list; set the whole list instead`,
    );
  }
  if (isTable(child)) return child;
  throw new SpecError(
    here,
    `cannot apply override ${quoteText(assignment)}: ${here} is ${describeValue(child)}, not a table`,
  );
}

function parseOverridePath(pathText: string, assignment: string): PathStep[] {
  const bad = (why: string): never => {
    throw new InputError(`override ${quoteText(assignment)}: ${why}`);
  };
  if (pathText === '') bad('no key path before "="');
  const steps: PathStep[] = [];
  for (const segment of pathText.split('.')) {
    const match = /^([A-Za-z_][A-Za-z0-9_-]*)((?:\[\d+\])*)$/.exec(segment.trim());
    if (!match)
      bad(`${quoteText(segment)} is not a valid key (expected e.g. levels.tunnelling or levels.tunnelling[1])`);
    const [, key, indices] = match as RegExpExecArray;
    if (FORBIDDEN_KEYS.has(key)) bad(`"${key}" cannot be used as a key`);
    steps.push(key);
    for (const index of indices.matchAll(/\[(\d+)\]/g)) steps.push(Number(index[1]));
  }
  return steps;
}

function parseOverrideValue(text: string, assignment: string): unknown {
  try {
    return parseJsonStrict(text);
  } catch (e) {
    if (e instanceof JsonReadError && e.duplicate) {
      const key = formatPath(e.duplicate.path);
      throw new InputError(
        `override ${quoteText(assignment)}: ${key} is given twice in the value; a key may appear once`,
      );
    }
    return text;
  }
}

function formatPath(steps: readonly PathStep[]): string {
  return steps
    .map((s, i) => (typeof s === 'number' ? `[${s}]` : i === 0 ? keyForPath(s) : `.${keyForPath(s)}`))
    .join('');
}

// ---------------------------------------------------------------------------------------------
// Validation

/** Checks a raw tree and fills in defaults; every problem is a SpecError naming its key path. */
export function validateSpec(raw: Record<string, unknown>): Spec {
  const sectionNames = [...CORE_SECTIONS, ...OPTIONAL_SECTIONS.map((section) => section.name)];
  rejectUnknownKeys(raw, '', sectionNames);

  // [lattice] stands for [chain] (its molecules as the model's sites); both only when they agree.
  const lattice = raw.lattice === undefined ? null : validateLatticeSection(raw.lattice, 'lattice');
  const chainValue =
    raw.chain === undefined && lattice !== null ? null : validateChain(requiredSection(raw, 'chain', lattice === null));
  const chain = lattice === null ? (chainValue as Spec['chain']) : chainFromSections(chainValue, lattice);
  const levels = validateLevels(requiredSection(raw, 'levels'));
  const exchange = validateExchange(optionalSection(raw, 'exchange'), levels);
  const ising = validateIsing(optionalSection(raw, 'ising'), levels.count);
  const sitesText =
    lattice === null
      ? `chain.sites = ${chain.sites}`
      : lattice.vacancies.length > 0
        ? `the ${chain.sites} lattice sites left by lattice.vacancies`
        : `the ${chain.sites} sites of [lattice]`;
  const particles = validateParticles(optionalSection(raw, 'particles'), chain.sites, levels.count, sitesText);
  const solve = validateSolve(optionalSection(raw, 'solve'), chain.sites);

  const present = OPTIONAL_SECTIONS.filter((section) => Object.hasOwn(raw, section.name));
  const extra: Record<string, unknown> = {};
  for (const { name, validate } of present) extra[name] = validate(raw[name], name);
  const spec: Spec = { chain, levels, exchange, ising, particles, solve, extra };
  for (const { resolve } of present) resolve?.(spec, raw);
  return spec;
}

function validateChain(table: Table): Spec['chain'] {
  rejectUnknownKeys(table, 'chain', ['sites', 'boundary']);
  const sites = positiveInteger(requiredKey(table, 'chain', 'sites'), 'chain.sites');
  const boundary = oneOf(orDefault(table.boundary, 'open'), 'chain.boundary', ['open', 'periodic'] as const);
  // With 2 sites the wrap-around bond would duplicate the open one; with 1 it would be a self-bond.
  if (boundary === 'periodic' && sites < 3) {
    throw new SpecError('chain.boundary', `a periodic chain needs at least 3 sites, got chain.sites = ${sites}`);
  }
  return { sites, boundary };
}

function validateLevels(table: Table): Spec['levels'] {
  rejectUnknownKeys(table, 'levels', ['count', 'boundary', 'tunnelling', 'phase', 'detuning']);
  const count = positiveInteger(requiredKey(table, 'levels', 'count'), 'levels.count');
  const boundary = oneOf(orDefault(table.boundary, 'open'), 'levels.boundary', ['open', 'ring'] as const);
  // Below 3 levels the closing link would join levels that are already joined (or a level to itself).
  if (boundary === 'ring' && count < 3) {
    throw new SpecError('levels.boundary', `a ring needs at least 3 levels, got levels.count = ${count}`);
  }
  const linkCount = boundary === 'ring' ? count : count - 1;
  const perLink =
    boundary === 'ring'
      ? `one per link of a ring of ${count} levels`
      : `one per link of an open ladder of ${count} levels`;
  const perLevel = `one per level of ${count}`;
  return {
    count,
    boundary,
    tunnelling: numberOrList(orDefault(table.tunnelling, 1), 'levels.tunnelling', linkCount, perLink),
    phase: numberOrList(orDefault(table.phase, 0), 'levels.phase', linkCount, perLink),
    detuning: numberOrList(orDefault(table.detuning, 0), 'levels.detuning', count, perLevel),
  };
}

function validateExchange(table: Table, levels: Spec['levels']): Spec['exchange'] {
  rejectUnknownKeys(table, 'exchange', ['strength', 'range', 'cutoff', 'weights']);
  const strength = finiteNumber(orDefault(table.strength, 0), 'exchange.strength');
  const { range, cutoff } = rangeAndCutoff(table, 'exchange');
  const linkCount = levels.count - 1;
  const weightsValue = orDefault(table.weights, 'uniform');
  let weights: number[];
  let weightsName: ExchangeWeightsName;
  if (Array.isArray(weightsValue)) {
    const why =
      levels.boundary === 'ring'
        ? `one per link of ${levels.count} levels, not counting the ring's closing link, which exchange never crosses`
        : `one per link of an open ladder of ${levels.count} levels`;
    weights = numberList(weightsValue, 'exchange.weights', linkCount, why);
    weightsName = 'list';
  } else {
    const name = oneOf(weightsValue, 'exchange.weights', ['uniform', 'rotor'] as const, 'or a list of numbers');
    weights = name === 'rotor' ? rotorWeights(levels.count) : new Array<number>(linkCount).fill(1);
    weightsName = name;
  }
  return { strength, range, cutoff, weights, weightsName };
}

function validateIsing(table: Table, count: number): Spec['ising'] {
  rejectUnknownKeys(table, 'ising', ['strength', 'moments', 'range', 'cutoff']);
  const strength = finiteNumber(orDefault(table.strength, 0), 'ising.strength');
  const { range, cutoff } = rangeAndCutoff(table, 'ising');
  let moments: number[];
  if (table.moments === undefined) {
    // A nonzero strength with no moments would silently do nothing.
    if (strength !== 0)
      throw new SpecError('ising.moments', `required when ising.strength is not 0 (one per level of ${count})`);
    moments = new Array<number>(count).fill(0);
  } else {
    if (!Array.isArray(table.moments)) {
      throw new SpecError(
        'ising.moments',
        `expected a list of ${count} numbers (one per level), got ${describeValue(table.moments)}`,
      );
    }
    moments = numberList(table.moments, 'ising.moments', count, `one per level of ${count}`);
  }
  return { strength, moments, range, cutoff };
}

function rangeAndCutoff(table: Table, section: string): { range: InteractionRange; cutoff: number } {
  const range = oneOf(orDefault(table.range, 'nearest'), `${section}.range`, ['nearest', 'dipolar'] as const);
  if (table.cutoff === undefined) return { range, cutoff: Infinity };
  const path = `${section}.cutoff`;
  // A cutoff on nearest-neighbour coupling would be silently ignored.
  if (range !== 'dipolar')
    throw new SpecError(path, `only applies to ${section}.range = "dipolar" (range is "${range}")`);
  const cutoff = positiveNumber(table.cutoff, path);
  if (cutoff < 1) throw new SpecError(path, `must be at least 1 lattice spacing, or no pair is coupled; got ${cutoff}`);
  return { range, cutoff };
}

const PARTICLE_KINDS = ['pinned', 'hardcore', 'boson', 'fermion'] as const;
const PARTICLE_KEYS = ['kind', 'number', 'max_per_site', 'hopping', 'onsite'];

/** Keys that do nothing for a kind, and why: setting one is an error, as the user clearly expected it to matter. */
function unusedKeys(kind: ParticleKind): Record<string, string> {
  switch (kind) {
    case 'pinned': {
      const why = 'pinned particles never leave their site';
      return { hopping: why, onsite: why, max_per_site: why };
    }
    case 'hardcore':
      return {
        onsite: 'two hardcore particles never share a site; use kind = "boson" for soft-core',
        max_per_site: 'hardcore means at most one per site; use kind = "boson" for more',
      };
    case 'fermion':
      return {
        onsite: 'the on-site term is for soft-core bosons',
        max_per_site: 'fermions are limited to one per site and level, so a site holds at most levels.count',
      };
    default:
      return {};
  }
}

/**
 * [particles] with its per-kind tables: `[particles.boson]` (likewise pinned, hardcore, fermion)
 * holds keys that apply only when the kind is boson, over those of [particles]. So one spec, and
 * a scan over particles.kind, can give each kind its own settings (bosons at U = 4, the others
 * without an on-site term). Every kind's table is checked, whether its kind is chosen or not.
 */
/** `sitesText` says where the site count comes from, for messages. */
function validateParticles(particlesTable: Table, sites: number, count: number, sitesText: string): Spec['particles'] {
  rejectUnknownKeys(particlesTable, 'particles', [...PARTICLE_KEYS, ...PARTICLE_KINDS]);
  const kind = oneOf(orDefault(particlesTable.kind, 'pinned'), 'particles.kind', PARTICLE_KINDS);

  const table: Table = {};
  // Where each key was set, for errors: particles.onsite or particles.boson.onsite.
  const origin: Record<string, string> = {};
  for (const key of PARTICLE_KEYS) {
    if (particlesTable[key] === undefined) continue;
    table[key] = particlesTable[key];
    origin[key] = `particles.${key}`;
  }
  for (const tableKind of PARTICLE_KINDS) {
    if (particlesTable[tableKind] === undefined) continue;
    const path = `particles.${tableKind}`;
    const own = particlesTable[tableKind];
    if (!isTable(own))
      throw new SpecError(path, `expected a table of keys for kind = "${tableKind}", got ${describeValue(own)}`);
    rejectUnknownKeys(
      own,
      path,
      PARTICLE_KEYS.filter((k) => k !== 'kind'),
    );
    for (const [key, why] of Object.entries(unusedKeys(tableKind))) {
      if (own[key] !== undefined)
        throw new SpecError(`${path}.${key}`, `not used for kind = "${tableKind}" (${why}); remove it`);
    }
    // Types are checked for every kind's table, so a mistake is found before a scan reaches that kind.
    for (const [key, value] of Object.entries(own)) {
      if (key === 'number' || key === 'max_per_site') positiveInteger(value, `${path}.${key}`);
      else finiteNumber(value, `${path}.${key}`);
    }
    if (tableKind !== kind) continue;
    for (const [key, value] of Object.entries(own)) {
      table[key] = value;
      origin[key] = `${path}.${key}`;
    }
  }
  const at = (key: string): string => origin[key] ?? `particles.${key}`;

  for (const [key, why] of Object.entries(unusedKeys(kind))) {
    if (table[key] === undefined) continue;
    const elsewhere = PARTICLE_KINDS.filter((k) => !Object.hasOwn(unusedKeys(k), key)).map((k) => `[particles.${k}]`);
    throw new SpecError(
      at(key),
      `not used for kind = "${kind}" (${why}); remove it, or move it to ${elsewhere.join(' or ')} to apply it to that kind only`,
    );
  }

  const number = table.number === undefined ? sites : positiveInteger(table.number, at('number'));
  let maxPerSite: number;
  if (kind === 'boson') {
    maxPerSite = table.max_per_site === undefined ? number : positiveInteger(table.max_per_site, at('max_per_site'));
  } else {
    maxPerSite = kind === 'fermion' ? count : 1;
  }

  if (kind === 'pinned' && number !== sites) {
    throw new SpecError(
      at('number'),
      `pinned particles fill every site exactly once, so number must equal ${sitesText}, got ${number}`,
    );
  }
  if (number > sites * maxPerSite) {
    const capacity =
      kind === 'fermion'
        ? `${sites} sites with ${count} levels hold at most ${sites * count} fermions`
        : kind === 'boson'
          ? `${sites} sites with max_per_site = ${maxPerSite} hold at most ${sites * maxPerSite} bosons`
          : `${sites} sites hold at most ${sites} hardcore particles`;
    throw new SpecError(at('number'), `${capacity}, got ${number}`);
  }

  const hopping = finiteNumber(orDefault(table.hopping, 0), at('hopping'));
  const onsite = finiteNumber(orDefault(table.onsite, 0), at('onsite'));
  return { kind, number, maxPerSite, hopping, onsite };
}

function validateSolve(table: Table, sites: number): Spec['solve'] {
  rejectUnknownKeys(table, 'solve', [
    'states',
    'tolerance',
    'max_matvecs',
    'krylov',
    'seed',
    'entanglement',
    'symmetries',
    'sector',
    'threads',
    'observables',
  ]);
  const states = positiveInteger(orDefault(table.states, 4), 'solve.states');
  const tolerance = positiveNumber(orDefault(table.tolerance, 1e-9), 'solve.tolerance');
  const maxMatvecs = table.max_matvecs === undefined ? null : positiveInteger(table.max_matvecs, 'solve.max_matvecs');
  const krylov = table.krylov === undefined ? null : positiveInteger(table.krylov, 'solve.krylov');
  // The subspace must hold the wanted states and still have room to grow.
  if (krylov !== null && krylov <= states) {
    throw new SpecError('solve.krylov', `must exceed solve.states = ${states}, got ${krylov}`);
  }
  const seed = nonNegativeInteger(orDefault(table.seed, 1), 'solve.seed');
  const entanglementValue = orDefault(table.entanglement, 'auto');
  // A list of lists names subsystems by their sites; they are kept apart from chain cuts, which
  // need a chain (src/spec/lattice.ts refuses cuts off one) while site lists work on any geometry.
  const bySites = Array.isArray(entanglementValue) && entanglementValue.some((x) => Array.isArray(x));
  const entanglement = bySites ? 'none' : validateEntanglement(entanglementValue, sites);
  const entanglementSites = bySites ? validateEntanglementSites(entanglementValue as unknown[], sites) : [];
  const symmetries = validateSymmetries(orDefault(table.symmetries, 'auto'));
  const sector = validateSector(orDefault(table.sector, {}));
  const threadsRaw = orDefault(table.threads, 'auto');
  const threads = threadsRaw === 'auto' ? 'auto' : positiveInteger(threadsRaw, 'solve.threads');
  const observables = oneOf(orDefault(table.observables, 'ground'), 'solve.observables', ['ground', 'each'] as const);
  return {
    states,
    tolerance,
    maxMatvecs,
    krylov,
    seed,
    entanglement,
    entanglementSites,
    symmetries,
    sector,
    threads,
    observables,
  };
}

const SYMMETRY_CHOICES = ['translation', 'reflection', 'level_flip', 'charge', 'point_group', 'automorphism'] as const;

function validateSymmetries(value: unknown): Spec['solve']['symmetries'] {
  const path = 'solve.symmetries';
  if (!Array.isArray(value)) return oneOf(value, path, ['auto', 'none'] as const, 'or a list of symmetry names');
  return value.map((name, i) => oneOf(name, `${path}[${i}]`, SYMMETRY_CHOICES));
}

function validateSector(raw: unknown): Spec['solve']['sector'] {
  const path = 'solve.sector';
  const value = expectTable(raw, path);
  rejectUnknownKeys(value, path, ['momentum', 'parity', 'level_flip', 'charge', 'point_group']);
  const sector: Spec['solve']['sector'] = {};
  const list = (key: string) => {
    const v = value[key];
    return v === undefined
      ? undefined
      : Array.isArray(v)
        ? v.map((x, i) => [x, `${path}.${key}[${i}]`] as const)
        : [[v, `${path}.${key}`] as const];
  };
  const momentum = list('momentum');
  // A chain's momentum is a number; a lattice's a list [mx, my] (one entry per periodic direction).
  if (momentum)
    sector.momentum = momentum.map(([x, at]) =>
      Array.isArray(x) ? x.map((y, d) => nonNegativeInteger(y, `${at}[${d}]`)) : nonNegativeInteger(x, at),
    );
  const charge = list('charge');
  if (charge) sector.charge = charge.map(([x, at]) => nonNegativeInteger(x, at));
  for (const key of ['parity', 'level_flip'] as const) {
    const entries = list(key);
    if (!entries) continue;
    sector[key] = entries.map(([x, at]) => {
      if (x !== 1 && x !== -1) throw new SpecError(at, `expected +1 or -1, got ${describeValue(x)}`);
      return x as 1 | -1;
    });
  }
  // point_group = { x = 1, C4 = [0, 2] }: generator names are checked against the group found
  // (solveInSectors); here each value must be an integer (+1/-1 or m) or a list of them.
  if (value.point_group !== undefined) {
    const table = expectTable(value.point_group, `${path}.point_group`);
    sector.point_group = {};
    for (const [name, v] of Object.entries(table)) {
      const at = `${path}.point_group.${name}`;
      const entries = Array.isArray(v) ? v.map((x, i) => [x, `${at}[${i}]`] as const) : [[v, at] as const];
      sector.point_group[name] = entries.map(([x, where]) => {
        if (typeof x !== 'number' || !Number.isInteger(x))
          throw new SpecError(
            where,
            `expected an integer (+1/-1, or m of exp(2 pi i m / order)), got ${describeValue(x)}`,
          );
        return x;
      });
    }
  }
  return sector;
}

function validateEntanglement(value: unknown, sites: number): Spec['solve']['entanglement'] {
  const path = 'solve.entanglement';
  if (!Array.isArray(value)) return oneOf(value, path, ['none', 'auto', 'half', 'all'] as const, 'or a list of cuts');
  return value.map((cut, i) => {
    const at = `${path}[${i}]`;
    // A cut l splits sites 0..l-1 from l..L-1, so both sides are non-empty only for 1 <= l <= L-1.
    if (typeof cut !== 'number' || !Number.isSafeInteger(cut) || cut < 1 || cut > sites - 1) {
      throw new SpecError(
        at,
        `expected a cut from 1 to ${sites - 1} (sites left of the cut), got ${describeValue(cut)}`,
      );
    }
    return cut;
  });
}

/**
 * Subsystems as site lists: each a non-empty list of distinct model sites 0..sites-1 leaving at
 * least one site outside (both sides non-empty, as for a cut). Errors name the list and the site.
 */
function validateEntanglementSites(value: unknown[], sites: number): number[][] {
  const path = 'solve.entanglement';
  return value.map((list, i) => {
    const at = `${path}[${i}]`;
    if (!Array.isArray(list))
      throw new SpecError(
        at,
        `expected a list of sites (subsystem A), as every entry once one is a list, got ${describeValue(list)}`,
      );
    if (list.length === 0) throw new SpecError(at, 'expected at least one site in subsystem A, got an empty list');
    const seen = new Set<number>();
    for (const [k, site] of list.entries()) {
      if (typeof site !== 'number' || !Number.isSafeInteger(site) || site < 0 || site > sites - 1)
        throw new SpecError(`${at}[${k}]`, `expected a site from 0 to ${sites - 1}, got ${describeValue(site)}`);
      if (seen.has(site)) throw new SpecError(`${at}[${k}]`, `site ${site} is listed twice`);
      seen.add(site);
    }
    if (seen.size === sites)
      throw new SpecError(at, `lists every one of the ${sites} sites: leave at least one site outside subsystem A`);
    return list as number[];
  });
}

/** Rigid-rotor exchange weights c_n, n = 0..count-2: the squared M=0 dipole matrix element between levels n and n+1, normalised so c_0 = 1. */
export function rotorWeights(count: number): number[] {
  if (!Number.isInteger(count) || count < 1)
    throw new RangeError(`rotorWeights: count must be a positive integer, got ${count}`);
  const weights: number[] = [];
  for (let n = 0; n < count - 1; n++) weights.push((n + 1) ** 2 / ((2 * n + 1) * (2 * n + 3)) / (1 / 3));
  return weights;
}

// ---------------------------------------------------------------------------------------------
// Top-level sections

function requiredSection(raw: Table, name: string, orLattice = false): Table {
  if (raw[name] === undefined)
    throw new SpecError(
      name,
      `required section is missing${orLattice ? ' (or describe the sites with [lattice])' : ''}`,
    );
  return optionalSection(raw, name);
}

function optionalSection(raw: Table, name: string): Table {
  const value = raw[name];
  if (value === undefined) return {};
  return expectTable(value, name);
}
