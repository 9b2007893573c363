// The one list of what rungchain measures: every observable a solved point or a time trace holds,
// and the scalars summaries, reports and fits read off a point. Readers take names, order, titles
// and units from here; docs/model.md defines each quantity.
//
// The order of OBSERVABLES is the order readers write them in: a trace's JSON lists those of every
// trace first and then the others, the long summaries their `long` ones, the summaries' scalar
// columns the record's scalar ones, each in this order.

export type ObservableShape =
  | 'scalar'
  /** [site] */
  | 'per site'
  /** [site][level] */
  | 'per site and level'
  /** [site][site] */
  | 'per site pair'
  /** [m] at k = 2 pi m / L, m = 0..L-1; null on open chains */
  | 'per momentum'
  /** [{ separation: [x, y, z], distance, pairs, value }], one per minimum-image separation vector; null without translations */
  | 'per separation'
  /** [{ cut, von_neumann, renyi_2, spectrum }], one per cut, or [{ sites, ... }], one per site list */
  | 'per cut';

/** Which solved points or traces carry an observable. */
export type Presence =
  | 'every kind'
  | 'itinerant kinds'
  /** Itinerant kinds whose state is complex. */
  | 'itinerant kinds, complex'
  /** Pinned molecules when solve.entanglement gives cuts (chains) or site lists (any geometry). */
  | 'pinned, with cuts'
  | 'under a ramp';

export interface Observable {
  name: string;
  shape: ObservableShape;
  /** For plot titles. */
  title: string;
  /** For axis labels and table heads. */
  short: string;
  /** An energy: shown in the model's energy unit or, with [units], in h·kHz. */
  energy: boolean;
  /** The unit of anything else ('' for a plain number). */
  unit: string;
  /** In a solved point's `observables`. */
  record?: Presence;
  /** In every recorded time of a trace. */
  trace?: Presence;
  /** Written one value per row by the long summaries of scans and of traces (a per-momentum one with m in `site`). */
  long?: readonly ('scan' | 'trace')[];
  /** A per-site observable that summaries, reports and fits read as its mean over sites. */
  siteMean?: boolean;
  /** Left out of narrow tables (it follows one that is kept). */
  secondary?: boolean;
  /** A per-site-pair observable whose diagonal is not zero: long rows include it. */
  diagonal?: boolean;
  /** The values it can take as a scalar (or a site mean): a fit extrapolating outside them is flagged. */
  range?: readonly [number, number];
}

export const OBSERVABLES: readonly Observable[] = [
  {
    name: 'populations',
    shape: 'per site and level',
    title: 'level populations per site',
    short: 'P(n)',
    energy: false,
    unit: '',
    record: 'every kind',
    trace: 'every kind',
    long: ['scan', 'trace'],
  },
  {
    name: 'level_mean',
    shape: 'per site',
    title: 'mean level ⟨n⟩',
    short: '⟨n⟩',
    energy: false,
    unit: 'levels',
    record: 'every kind',
    trace: 'every kind',
    long: ['scan', 'trace'],
    siteMean: true,
    range: [0, Infinity],
  },
  {
    name: 'spread',
    shape: 'per site',
    title: 'level spread ⟨n²⟩ − ⟨n⟩²',
    short: '⟨n²⟩ − ⟨n⟩²',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    trace: 'every kind',
    long: ['scan', 'trace'],
    siteMean: true,
    secondary: true,
    range: [0, Infinity],
  },
  {
    name: 'density',
    shape: 'per site',
    title: 'particles per site ⟨N_i⟩',
    short: '⟨N_i⟩',
    energy: false,
    unit: 'particles',
    record: 'itinerant kinds',
    trace: 'itinerant kinds',
    long: ['scan'],
  },
  {
    name: 'double_occupancy',
    shape: 'per site',
    title: 'particle pairs per site ⟨N_i (N_i − 1)/2⟩',
    short: 'pairs',
    energy: false,
    unit: 'pairs',
    record: 'itinerant kinds',
    trace: 'itinerant kinds',
    long: ['scan'],
  },
  {
    name: 'string_width',
    shape: 'scalar',
    title: 'string width',
    short: 'string width',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    trace: 'every kind',
    range: [0, Infinity],
  },
  {
    name: 'pair_separation',
    shape: 'per site pair',
    title: 'pair separation ⟨(n_i − n_j)²⟩',
    short: '⟨(n_i − n_j)²⟩',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    trace: 'every kind',
    long: ['scan'],
  },
  {
    name: 'level_correlation',
    shape: 'per site pair',
    title: 'connected level correlation ⟨n_i n_j⟩ − ⟨n_i⟩⟨n_j⟩',
    short: '⟨n_i n_j⟩_c',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    long: ['scan'],
    diagonal: true,
  },
  {
    name: 'level_structure_factor',
    shape: 'per momentum',
    title: 'level structure factor S(q)',
    short: 'S(q)',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    long: ['scan'],
  },
  {
    name: 'level_correlation_by_separation',
    shape: 'per separation',
    title: 'level correlation by separation vector',
    short: 'C(r)',
    energy: false,
    unit: 'levels²',
    record: 'every kind',
    long: ['scan'],
  },
  {
    name: 'return_probability',
    shape: 'scalar',
    title: 'return probability |⟨ψ(0)|ψ(t)⟩|²',
    short: 'return P',
    energy: false,
    unit: '',
    trace: 'every kind',
  },
  {
    name: 'energy',
    shape: 'scalar',
    title: 'energy ⟨ψ(t)|H(t)|ψ(t)⟩',
    short: 'energy',
    energy: true,
    unit: '',
    trace: 'every kind',
  },
  { name: 'norm', shape: 'scalar', title: 'norm ‖ψ(t)‖', short: 'norm', energy: false, unit: '', trace: 'every kind' },
  {
    name: 'one_body_density_matrix',
    shape: 'per site pair',
    title: 'one-body density matrix, real part',
    short: 'Re ρ_ij',
    energy: false,
    unit: '',
    record: 'itinerant kinds',
    trace: 'itinerant kinds',
  },
  {
    name: 'one_body_density_matrix_imag',
    shape: 'per site pair',
    title: 'one-body density matrix, imaginary part',
    short: 'Im ρ_ij',
    energy: false,
    unit: '',
    record: 'itinerant kinds, complex',
    trace: 'itinerant kinds, complex',
  },
  {
    name: 'condensate_fraction',
    shape: 'scalar',
    title: 'condensate fraction',
    short: 'condensate fraction',
    energy: false,
    unit: '',
    record: 'itinerant kinds',
    trace: 'itinerant kinds',
    range: [0, 1],
  },
  {
    name: 'momentum_distribution',
    shape: 'per momentum',
    title: 'momentum distribution n(k)',
    short: 'n(k)',
    energy: false,
    unit: 'particles',
    record: 'itinerant kinds',
    trace: 'itinerant kinds',
  },
  {
    name: 'ground_overlap',
    shape: 'scalar',
    title: 'weight in the ground space of H(t)',
    short: 'ground overlap',
    energy: false,
    unit: '',
    trace: 'under a ramp',
  },
  {
    name: 'entanglement',
    shape: 'per cut',
    title: 'entanglement entropies and spectrum per cut',
    short: 'entanglement',
    energy: false,
    unit: 'nats',
    record: 'pinned, with cuts',
  },
];

const BY_NAME = new Map(OBSERVABLES.map((o) => [o.name, o]));

export function observableEntry(name: string): Observable | undefined {
  return BY_NAME.get(name);
}

/** Observables every trace holds, then those only some traces hold: the order of a trace's JSON. */
export const TRACE_OBSERVABLES = {
  always: OBSERVABLES.filter((o) => o.trace === 'every kind').map((o) => o.name),
  sometimes: OBSERVABLES.filter((o) => o.trace !== undefined && o.trace !== 'every kind').map((o) => o.name),
};

/** Observables the long summaries write one value per row, in order. */
export function longObservables(of: 'scan' | 'trace'): Observable[] {
  return OBSERVABLES.filter((o) => o.long?.includes(of));
}

/** The scalar observables of solved points, in order. */
const RECORD_SCALAR_OBSERVABLES = OBSERVABLES.filter((o) => o.record !== undefined && o.shape === 'scalar');

/** The scalar observables any of these points' `observables` hold as numbers, in catalogue order. */
export function scalarObservablesIn(all: Iterable<Record<string, unknown> | undefined>): string[] {
  const present = new Set<string>();
  for (const observables of all)
    if (observables)
      for (const o of RECORD_SCALAR_OBSERVABLES) if (typeof observables[o.name] === 'number') present.add(o.name);
  return RECORD_SCALAR_OBSERVABLES.map((o) => o.name).filter((name) => present.has(name));
}

/** The scalars a trace's tidy CSV writes per recorded time, in order (the mean level follows them). */
export const TRACE_CSV_SCALARS = ['energy', 'norm', 'return_probability', 'string_width', 'ground_overlap'] as const;

// ---------------------------------------------------------------------------------------------
// Scalars of a solved point, by name: what summaries, reports and fits draw and fit

/** A scalar read off a solved point. */
export interface PointScalar {
  name: string;
  title: string;
  short: string;
  energy: boolean;
  unit: string;
  /** When summaries and reports offer it: always (even before any point is solved), for every solved point, or when the point has a value. */
  offered: 'always' | 'every point' | 'with a value';
  secondary: boolean;
  /** The values it can take (a level mean's upper end, N - 1, varies and is left open); unbounded when absent. */
  range?: readonly [number, number];
}

function subscript(digits: string): string {
  return [...digits].map((d) => '₀₁₂₃₄₅₆₇₈₉'[Number(d)]).join('');
}

/** Ek, the energy of state k, written with the digits of k as given. */
function energyScalar(digits: string): PointScalar {
  return {
    name: `E${digits}`,
    title: `E${subscript(digits)}, energy of state ${digits}`,
    short: `E${subscript(digits)}`,
    energy: true,
    unit: '',
    offered: Number(digits) === 0 ? 'always' : 'with a value',
    secondary: false,
  };
}

/** Scalars computed from a point's energies and entanglement rather than held in its `observables`. */
const DERIVED_SCALARS: readonly PointScalar[] = [
  energyScalar('0'),
  {
    name: 'E0/L',
    title: 'E₀/L, ground energy per site',
    short: 'E₀/L',
    energy: true,
    unit: '',
    offered: 'always',
    secondary: false,
  },
  {
    name: 'gap',
    title: 'gap E₁ − E₀',
    short: 'E₁ − E₀',
    energy: true,
    unit: '',
    offered: 'with a value',
    secondary: false,
    range: [0, Infinity],
  },
  {
    name: 'entropy',
    title: 'half-chain entanglement entropy (von Neumann)',
    short: 'S, half chain',
    energy: false,
    unit: 'nats',
    offered: 'with a value',
    secondary: false,
    range: [0, Infinity],
  },
  {
    name: 'renyi_2',
    title: 'half-chain Rényi-2 entropy',
    short: 'S₂, half chain',
    energy: false,
    unit: 'nats',
    offered: 'with a value',
    secondary: true,
    range: [0, Infinity],
  },
];

function scalarOf(o: Observable, siteMean: boolean): PointScalar {
  return {
    name: o.name,
    title: siteMean ? `${o.title}, averaged over sites` : o.title,
    short: o.short,
    energy: o.energy,
    unit: o.unit,
    offered: siteMean ? 'every point' : 'with a value',
    secondary: o.secondary ?? false,
    ...(o.range ? { range: o.range } : {}),
  };
}

/**
 * Every named scalar of a solved point, in the order summaries and reports list them: E0, E0/L,
 * gap, the half-chain entropies, the scalar observables, then per-site observables as their mean
 * over sites. E1, E2, ... are scalars too (energyScalar).
 */
export const POINT_SCALARS: readonly PointScalar[] = [
  ...DERIVED_SCALARS,
  ...RECORD_SCALAR_OBSERVABLES.map((o) => scalarOf(o, false)),
  ...OBSERVABLES.filter((o) => o.siteMean).map((o) => scalarOf(o, true)),
];

const SCALAR_BY_NAME = new Map(POINT_SCALARS.map((s) => [s.name, s]));

/** The index k of an energy Ek named "E<k>", or null. */
export function energyIndex(name: string): number | null {
  const m = /^E(\d+)$/.exec(name);
  return m ? Number(m[1]) : null;
}

/** The scalar called `name` (E0, E1, ..., or one of POINT_SCALARS), or undefined. */
export function pointScalar(name: string): PointScalar | undefined {
  return energyIndex(name) === null ? SCALAR_BY_NAME.get(name) : energyScalar(name.slice(1));
}

/** Drawn over two scanned parameters by the report, in this order. */
export const HEAT_MAP_SCALARS = ['string_width', 'gap', 'entropy', 'E0/L'] as const;
