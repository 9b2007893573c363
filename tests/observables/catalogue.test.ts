import { describe, expect, it } from 'vitest';
import {
  availableObservables,
  observableValue,
  type AnalysisInput,
  analyseScan,
} from '../../src/analysis/transitions.js';
import {
  planEvolution,
  runEvolution,
  timeFirstObservables,
  type EvolutionFrame,
} from '../../src/dynamics/evolution.js';
import { tracesCsv, tracesLongCsv, type EvolveRunContents } from '../../src/dynamics/evolveRun.js';
import { renderReport } from '../../src/output/report/report.js';
import { sideBySide } from '../../src/output/sideBySide.js';
import { longRows, summaryCsv, summaryJson } from '../../src/output/summary.js';
import { solvePoint, type PointRecord } from '../../src/point/solvePoint.js';
import type { ScanRunSummary } from '../../src/scan/scanRun.js';
import { validateSpec } from '../../src/spec/spec.js';
import {
  HEAT_MAP_SCALARS,
  OBSERVABLES,
  POINT_SCALARS,
  TRACE_CSV_SCALARS,
  TRACE_OBSERVABLES,
  observableEntry,
  pointScalar,
  type ObservableShape,
} from '../../src/observables/catalogue.js';

// Small solved records and traces of every kind of content: a pinned chain with its entanglement
// cuts, a complex itinerant state on a periodic chain (imaginary one-body density matrix, momentum
// distribution), an itinerant state on an open chain (no momentum distribution), and traces with
// and without a ramp.
const PINNED = {
  chain: { sites: 3, boundary: 'periodic' },
  levels: { count: 2, tunnelling: 1 },
  exchange: { strength: 1 },
  solve: { states: 3, entanglement: 'all' },
};
const ITINERANT = {
  chain: { sites: 3, boundary: 'periodic' },
  levels: { count: 2, tunnelling: 0.5, phase: 0.3 },
  exchange: { strength: 1 },
  particles: { kind: 'hardcore', number: 2, hopping: 1 },
  solve: { states: 2 },
};
const OPEN_FERMIONS = {
  ...ITINERANT,
  chain: { sites: 3, boundary: 'open' },
  particles: { ...ITINERANT.particles, kind: 'fermion' },
};

const solve = (raw: Record<string, unknown>): PointRecord => solvePoint(validateSpec(raw)).record;

function frames(raw: Record<string, unknown>): EvolutionFrame[] {
  return runEvolution(planEvolution(raw, validateSpec(raw))).frames;
}
const PINNED_TRACE = {
  chain: { sites: 2 },
  levels: { count: 2, tunnelling: 0.5 },
  evolve: { initial: [0, 0], times: { from: 0, to: 1, steps: 2 } },
};
const ITINERANT_RAMP = {
  chain: { sites: 3, boundary: 'periodic' },
  levels: { count: 2, tunnelling: 0.5, phase: 0.4 },
  exchange: { strength: 1 },
  particles: { kind: 'boson', number: 2, hopping: 1 },
  evolve: {
    initial: [0, 1, -1],
    times: { from: 0, to: 1, steps: 2 },
    ramp: { key: 'exchange.strength', from: 0, to: 1, duration: 1, steps: 4 },
  },
};

const pinned = solve(PINNED);
const itinerant = solve(ITINERANT);
const openFermions = solve(OPEN_FERMIONS);

/** A scan run in memory: one axis `particles.kind`, one done point per record. */
function scanOf(records: PointRecord[], kinds: string[]): ScanRunSummary {
  return {
    section: { axes: [{ key: 'particles.kind', values: kinds }], zip: false },
    rows: records.map((result, index) => ({
      index,
      params: { 'particles.kind': kinds[index] },
      status: 'done',
      record: {
        index,
        params: { 'particles.kind': kinds[index] },
        status: 'done',
        result,
        iterations: 1,
        seconds: 0,
        warm_start: false,
        overlap_previous: null,
        worker: 0,
        finished: '',
      },
    })),
  } as unknown as ScanRunSummary;
}

function traceRun(traced: EvolutionFrame[][]): EvolveRunContents {
  return {
    dir: '',
    manifest: {},
    keys: [],
    traces: traced.map((f, point) => ({
      point,
      params: {},
      status: 'done',
      notes: [],
      frames: f.map((frame) => ({ ...frame, kind: 'frame', point, params: {}, time_ms: null })),
    })),
  } as unknown as EvolveRunContents;
}

// The orders readers write observables in (columns, JSON keys, long rows, report sections). The
// README and docs/model.md name these lists; nothing else fixes their order, so it is pinned here.
describe('summary --csv holds every scalar of the JSON', () => {
  const parse = (text: string) => {
    const [head, ...lines] = text.trim().split('\n');
    const names = head.split(',');
    return lines.map((l) => Object.fromEntries(l.split(',').map((v, k) => [names[k], v])));
  };

  it('the gap above the ground level and the half-chain entropies, equal to the JSON values', () => {
    const scan = scanOf([pinned, itinerant], ['pinned', 'hardcore']);
    const rows = parse(summaryCsv(scan));
    const json = summaryJson(scan);
    const half = (
      json[0].observables as { entanglement: { cut: number; von_neumann: number; renyi_2: number }[] }
    ).entanglement.find((c) => c.cut === Math.floor(3 / 2))!;
    expect(Number(rows[0].entropy)).toBe(half.von_neumann);
    expect(Number(rows[0].renyi_2)).toBe(half.renyi_2);
    expect(rows[1].entropy).toBe('');
    for (let i = 0; i < 2; i++) expect(Number(rows[i].gap_above_ground)).toBe(json[i].gap_above_ground);
  });

  it('no entropy columns when no point has entanglement cuts', () => {
    const header = summaryCsv(scanOf([itinerant], ['hardcore']))
      .split('\n')[0]
      .split(',');
    expect(header).not.toContain('entropy');
    expect(header).toContain('gap_above_ground');
  });
});

describe('readers write observables in a fixed order', () => {
  const scan = scanOf([pinned, itinerant, openFermions], ['pinned', 'hardcore', 'fermion']);

  it('scan summaries: scalar columns, JSON keys, long rows and side-by-side quantities', () => {
    const header = summaryCsv(scan).split('\n')[0].split(',');
    expect(header.slice(header.indexOf('gap'), header.indexOf('dimension'))).toEqual([
      'gap',
      'gap_above_ground',
      'string_width',
      'condensate_fraction',
      'entropy',
      'renyi_2',
    ]);
    expect(Object.keys(summaryJson(scan)[1])).toEqual([
      'index',
      'particles.kind',
      'status',
      'energies',
      'gap',
      'gap_above_ground',
      'observables',
      'string_width',
      'condensate_fraction',
      'dimension',
      'converged',
      'degeneracy',
      'degeneracy_complete',
      'iterations',
      'warm_start',
      'overlap_previous',
      'seconds',
    ]);
    const order = (rows: { observable: string }[]) => [...new Set(rows.map((r) => r.observable))];
    expect(order(longRows(scan))).toEqual([
      'populations',
      'level_mean',
      'spread',
      'pair_separation',
      'level_correlation',
      'level_structure_factor',
      'level_correlation_by_separation',
      'density',
      'double_occupancy',
    ]);
    expect(order(longRows(scanOf([itinerant], ['hardcore'])))).toEqual([
      'populations',
      'level_mean',
      'spread',
      'density',
      'double_occupancy',
      'pair_separation',
      'level_correlation',
      'level_structure_factor',
      'level_correlation_by_separation',
    ]);
    // Rows per point: L*N populations, L level means and spreads, L(L-1)/2 pair separations,
    // L(L+1)/2 level correlations, L structure factors and L separation vectors on a ring (none on an
    // open chain, where both are null), and L densities and pair counts for itinerant kinds; L = 3, N = 2 here.
    const rowsOf = (record: PointRecord, kind: string) => longRows(scanOf([record], [kind])).length;
    expect(rowsOf(pinned, 'pinned')).toBe(6 + 3 + 3 + 3 + 6 + 3 + 3);
    expect(rowsOf(itinerant, 'hardcore')).toBe(6 + 3 + 3 + 3 + 3 + 3 + 6 + 3 + 3);
    expect(rowsOf(openFermions, 'fermion')).toBe(6 + 3 + 3 + 3 + 3 + 3 + 6);
    expect(longRows(scanOf([pinned], ['pinned'])).filter((r) => r.observable === 'level_structure_factor')).toEqual(
      pinned.observables.level_structure_factor!.map((value, m) => ({
        index: 0,
        params: { 'particles.kind': 'pinned' },
        state: null,
        observable: 'level_structure_factor',
        site: m,
        level: null,
        other_site: null,
        separation: null,
        value,
      })),
    );
    expect(sideBySide(scanOf([itinerant, pinned], ['hardcore', 'pinned']), 'kind').quantities).toEqual([
      'E0',
      'gap',
      'string_width',
      'condensate_fraction',
    ]);
  });

  it('analysis: the scalars a record offers, itinerant first and pinned first', () => {
    expect(availableObservables([pinned])).toEqual([
      'E0',
      'E0/L',
      'gap',
      'entropy',
      'renyi_2',
      'string_width',
      'level_mean',
      'spread',
    ]);
    expect(availableObservables([itinerant, pinned])).toEqual([
      'E0',
      'E0/L',
      'gap',
      'string_width',
      'condensate_fraction',
      'level_mean',
      'spread',
      'entropy',
      'renyi_2',
    ]);
    expect(availableObservables([])).toEqual(['E0', 'E0/L']);
  });

  it('time traces: JSON keys, CSV columns and long rows', () => {
    const plain = frames(PINNED_TRACE);
    const ramped = frames(ITINERANT_RAMP);
    expect(Object.keys(timeFirstObservables(plain))).toEqual([
      'populations',
      'level_mean',
      'spread',
      'string_width',
      'pair_separation',
      'return_probability',
      'energy',
      'norm',
    ]);
    expect(Object.keys(timeFirstObservables(ramped))).toEqual([
      'populations',
      'level_mean',
      'spread',
      'string_width',
      'pair_separation',
      'return_probability',
      'energy',
      'norm',
      'density',
      'double_occupancy',
      'one_body_density_matrix',
      'one_body_density_matrix_imag',
      'condensate_fraction',
      'momentum_distribution',
      'ground_overlap',
    ]);
    const run = traceRun([plain, ramped]);
    expect(tracesCsv(run).split('\n')[0]).toBe(
      'point,frame,time,time_ms,energy,norm,return_probability,string_width,ground_overlap,mean_level,error_bound',
    );
    const long = tracesLongCsv(run).trim().split('\n');
    expect(long[0]).toBe('point,time,time_ms,observable,site,level,value');
    expect([...new Set(long.slice(1).map((line) => line.split(',')[3]))]).toEqual([
      'populations',
      'level_mean',
      'spread',
    ]);
  });

  it('reports: the observables drawn, the heat maps and the columns of the table of values', () => {
    const sites = [3, 4];
    const strengths = [0.5, 1, 2];
    const points: AnalysisInput['points'] = [];
    for (const L of sites)
      for (const V of strengths)
        points.push({
          index: points.length,
          params: { 'chain.sites': L, 'exchange.strength': V },
          record: solve({ ...PINNED, chain: { sites: L, boundary: 'periodic' }, exchange: { strength: V } }),
          overlapPrevious: null,
        });
    const input: AnalysisInput = {
      axes: [
        { key: 'chain.sites', values: sites },
        { key: 'exchange.strength', values: strengths },
      ],
      zip: false,
      points,
    };
    const html = renderReport({ ...input, title: 't', about: [], analysis: analyseScan(input), energyUnitHz: null });
    const ids = [...html.matchAll(/id="((?:obs|heat)-[^"]*)"/g)].map((m) => m[1]);
    expect(ids).toEqual([
      'obs-E0-L',
      'obs-gap',
      'obs-entropy',
      'obs-renyi-2',
      'obs-string-width',
      'obs-level-mean',
      'obs-spread',
      'heat-string-width',
      'heat-gap',
      'heat-entropy',
      'heat-E0-L',
    ]);
    for (const title of [
      'E₀/L, ground energy per site against',
      'gap E₁ − E₀ against',
      'half-chain entanglement entropy (von Neumann) against',
      'half-chain Rényi-2 entropy against',
      'string width against',
      'mean level ⟨n⟩, averaged over sites against',
      'level spread ⟨n²⟩ − ⟨n⟩², averaged over sites against',
    ])
      expect(html).toContain(title);

    const kinds = [pinned, itinerant];
    const byKind: AnalysisInput = {
      axes: [{ key: 'particles.kind', values: ['pinned', 'hardcore'] }],
      zip: false,
      points: kinds.map((record, index) => ({
        index,
        params: { 'particles.kind': index === 0 ? 'pinned' : 'hardcore' },
        record,
        overlapPrevious: null,
      })),
    };
    const table = renderReport({
      ...byKind,
      title: 't',
      about: [],
      analysis: analyseScan(byKind),
      energyUnitHz: 1e3,
    });
    const head = /<table class="values"><tr>(.*?)<\/tr>/.exec(table)![1];
    expect([...head.matchAll(/<th>(.*?)<\/th>/g)].map((m) => m[1])).toEqual([
      'point',
      'particles.kind',
      'E₀/L [h·kHz]',
      'E₁ − E₀ [h·kHz]',
      'S, half chain [nats]',
      'string width [levels²]',
      '⟨n⟩ [levels]',
      'condensate fraction',
    ]);
  });
});

/** Whether `value` has the catalogue's shape on a chain of `sites` sites with `levels` levels. */
function hasShape(shape: ObservableShape, value: unknown, sites: number, levels: number): boolean {
  const numbers = (v: unknown, n: number) =>
    Array.isArray(v) && v.length === n && v.every((x) => typeof x === 'number');
  switch (shape) {
    case 'scalar':
      return typeof value === 'number';
    case 'per site':
      return numbers(value, sites);
    case 'per site and level':
      return Array.isArray(value) && value.length === sites && value.every((row) => numbers(row, levels));
    case 'per site pair':
      return Array.isArray(value) && value.length === sites && value.every((row) => numbers(row, sites));
    case 'per momentum':
      return value === null || numbers(value, sites);
    case 'per separation':
      return (
        value === null ||
        (Array.isArray(value) &&
          value.every(
            (e: Record<string, unknown>) =>
              numbers(e.separation, 3) && ['distance', 'pairs', 'value'].every((k) => typeof e[k] === 'number'),
          ))
      );
    case 'per cut':
      return (
        Array.isArray(value) &&
        value.every((c: Record<string, unknown>) =>
          ['cut', 'von_neumann', 'renyi_2'].every((k) => typeof c[k] === 'number'),
        )
      );
  }
}

// A new observable cannot be half-added: whatever a record or a trace holds is in the catalogue,
// with the shape the catalogue gives, and whatever the catalogue says every point holds is there.
describe('the catalogue lists every observable a solved point or a trace holds', () => {
  const records = { pinned, itinerant, openFermions };

  it.each(Object.entries(records))('%s record', (_, record) => {
    const { sites, levels } = record.basis;
    for (const [name, value] of Object.entries(record.observables)) {
      const entry = observableEntry(name);
      expect(entry?.record, `${name} in the catalogue as a record observable`).toBeDefined();
      expect(hasShape(entry!.shape, value, sites, levels), `${name} is ${entry!.shape}`).toBe(true);
    }
    for (const o of OBSERVABLES.filter((e) => e.record === 'every kind'))
      expect(record.observables).toHaveProperty(o.name);
  });

  it('itinerant records hold the itinerant observables; the complex one its imaginary part; cuts their entanglement', () => {
    for (const o of OBSERVABLES.filter((e) => e.record === 'itinerant kinds')) {
      expect(itinerant.observables).toHaveProperty(o.name);
      expect(openFermions.observables).toHaveProperty(o.name);
    }
    expect(itinerant.observables).toHaveProperty('one_body_density_matrix_imag');
    expect(pinned.observables).toHaveProperty('entanglement');
  });

  it('traces, with and without a ramp', () => {
    for (const [raw, sites] of [
      [PINNED_TRACE, 2],
      [ITINERANT_RAMP, 3],
    ] as const) {
      for (const frame of frames(raw)) {
        for (const [name, value] of Object.entries(frame.observables)) {
          const entry = observableEntry(name);
          expect(entry?.trace, `${name} in the catalogue as a trace observable`).toBeDefined();
          expect(hasShape(entry!.shape, value, sites, 2), `${name} is ${entry!.shape}`).toBe(true);
        }
        for (const name of TRACE_OBSERVABLES.always) expect(frame.observables).toHaveProperty(name);
      }
    }
    const ramped = frames(ITINERANT_RAMP)[0].observables;
    for (const name of TRACE_OBSERVABLES.sometimes) expect(ramped).toHaveProperty(name);
  });

  it('every scalar it names has a value on some point, and a title', () => {
    for (const s of POINT_SCALARS) {
      const values = [pinned, itinerant].map((r) => observableValue(r, s.name));
      expect(
        values.some((v) => typeof v === 'number'),
        s.name,
      ).toBe(true);
      expect(pointScalar(s.name)).toEqual(s);
    }
    for (const name of [...HEAT_MAP_SCALARS, ...TRACE_CSV_SCALARS])
      expect(pointScalar(name) ?? observableEntry(name)).toBeDefined();
    expect(pointScalar('E12')?.title).toBe('E₁₂, energy of state 12');
    expect(pointScalar('nonsense')).toBeUndefined();
  });
});
