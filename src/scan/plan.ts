// Parameter scans: a spec's [scan] section (validated in src/spec/scanSection.ts) expanded into points.
//
// Axes combine as a grid, the last axis varying fastest: point index = row-major over the axes.
// The points along the last axis (with all others fixed) form a "line": neighbours on a line run
// in order on one worker so each can start from the previous ground state. With zip the whole
// sequence is one line.
//
// Each point is the spec tree with the [scan] section removed and every axis key set, validated
// like any spec; a combination that is not a valid spec is reported before anything runs.

import { InputError, SpecError } from '../errors/errors.js';
import { planPoint, type PointPlan } from '../point/solvePoint.js';
import { formatBytes } from '../format/bytes.js';
import { roughDuration } from '../format/durations.js';
import { denseThresholdFor } from '../solver/eigensolver.js';
import { applyOverride, validateSpec, type Spec } from '../spec/spec.js';
import type { ScanSection, ScanValue } from '../spec/scanSection.js';
import { cutText } from '../spec/validate.js';
import { REALIZATION_KEY } from '../spec/disorder.js';
import { runIdentity } from '../runs/runFiles.js';
import { sectorSizes, type SectorSize } from '../symmetry/sectorSizes.js';
import { spectrumMemory } from '../spectrum/spectrum.js';

export type { ScanAxis, ScanSection, ScanValue } from '../spec/scanSection.js';

export type ScanParams = Record<string, ScanValue>;

export interface ScanPoint {
  index: number;
  /** The scanned values under their key paths, e.g. { "exchange.strength": 2.5 }. */
  params: ScanParams;
  /** The spec tree of this point (no [scan] section), as sent to a worker. */
  raw: Record<string, unknown>;
  spec: Spec;
}

export interface ScanPlan {
  section: ScanSection;
  points: ScanPoint[];
  /** Point indices along the innermost axis, in order; every point is on exactly one line. */
  lines: number[][];
  /** Hash of the spec and the expanded axes: equal for runs that must give equal records. */
  identity: string;
}

/** The validated [scan] section of a spec, or null when it has none. */
export function scanOf(spec: Spec): ScanSection | null {
  return (spec.extra.scan as ScanSection | undefined) ?? null;
}

// ---------------------------------------------------------------------------------------------
// Expansion

export function pointCount(section: ScanSection): number {
  return section.zip ? section.axes[0].values.length : section.axes.reduce((n, a) => n * a.values.length, 1);
}

/** The scanned values of point `index` (row-major over the axes, last fastest; zip: the index-th of each). */
export function paramsOf(section: ScanSection, index: number): ScanParams {
  const params: ScanParams = {};
  if (section.zip) {
    for (const a of section.axes) params[a.key] = a.values[index];
    return params;
  }
  let rest = index;
  const picks: number[] = [];
  for (let k = section.axes.length - 1; k >= 0; k--) {
    const n = section.axes[k].values.length;
    picks[k] = rest % n;
    rest = Math.floor(rest / n);
  }
  section.axes.forEach((a, k) => (params[a.key] = a.values[picks[k]]));
  return params;
}

/**
 * Lines along the innermost axis: consecutive indices sharing every other axis value. Realizations
 * of a disorder ensemble are no line: when they are the innermost axis each point is its own.
 */
export function linesOf(section: ScanSection): number[][] {
  const total = pointCount(section);
  const innermost = section.axes[section.axes.length - 1];
  const lineLength = section.zip ? total : innermost.key === REALIZATION_KEY ? 1 : innermost.values.length;
  const lines: number[][] = [];
  for (let start = 0; start < total; start += lineLength) {
    lines.push(Array.from({ length: lineLength }, (_, k) => start + k));
  }
  return lines;
}

/** A point's scanned values for people to read: each value cut to a readable length, control characters escaped. */
export function formatParams(params: ScanParams): string {
  return Object.entries(params)
    .map(
      ([k, v]) =>
        // eslint-disable-next-line no-control-regex -- control characters are what must be escaped
        `${cutText(k)}=${typeof v === 'string' && /^[^\u0000-\u001f\u007f]*$/.test(v) ? cutText(v) : cutText(JSON.stringify(v))}`,
    )
    .join(' ');
}

/** The spec tree of one point: the base tree without [scan], every axis key set. */
export function pointTree(raw: Record<string, unknown>, params: ScanParams): Record<string, unknown> {
  const tree = structuredClone(raw);
  delete tree.scan;
  // JSON text round-trips every ScanValue, so strings stay strings ("1" is not turned into 1).
  for (const [key, value] of Object.entries(params)) applyOverride(tree, `${key}=${JSON.stringify(value)}`);
  return tree;
}

/**
 * Expands a spec with a [scan] section into its points, validating each; an invalid combination
 * is a SpecError naming the key and the point. `raw` is the tree after --set overrides.
 */
export function expandScan(raw: Record<string, unknown>, spec: Spec): ScanPlan {
  const section = requireScan(spec);
  const points = [...eachScanPoint(raw, section)];
  return { section, points, lines: linesOf(section), identity: scanIdentity(raw, section) };
}

function requireScan(spec: Spec): ScanSection {
  const section = scanOf(spec);
  if (!section)
    throw new InputError('the spec has no [scan] section (add [[scan.axis]] entries, or use `rungchain solve`)');
  return section;
}

/** The points of a scan one at a time, each validated, so a caller that only sizes them holds one at a time. */
export function* eachScanPoint(raw: Record<string, unknown>, section: ScanSection): Generator<ScanPoint> {
  const total = pointCount(section);
  for (let index = 0; index < total; index++) {
    const params = paramsOf(section, index);
    let tree: Record<string, unknown>;
    let pointSpec: Spec;
    try {
      tree = pointTree(raw, params);
      pointSpec = validateSpec(tree);
    } catch (e) {
      if (e instanceof SpecError)
        throw new SpecError(e.keyPath, `${e.problem} (in scan point ${index}: ${formatParams(params)})`);
      throw e;
    }
    yield { index, params, raw: tree, spec: pointSpec };
  }
}

/** What determines a scan's records: the spec tree (with overrides) and the expanded axes. */
export function scanIdentity(raw: Record<string, unknown>, section: ScanSection): string {
  return runIdentity({
    kind: 'scan',
    spec: raw,
    axes: section.axes.map((a) => ({ key: a.key, values: a.values })),
    zip: section.zip,
  });
}

// ---------------------------------------------------------------------------------------------
// Sizes and costs

/**
 * Rough relative cost of solving a point, for ordering work (largest first) and balancing shards:
 * the dense path is cubic in the dimension; Lanczos is a few hundred products, each touching every
 * state once per term. Only ratios between points matter.
 */
export function pointCost(plan: PointPlan): number {
  const dim = plan.dimension;
  if (dim <= denseThresholdFor()) return (dim * dim * dim) / 50 + dim;
  const termsPerState =
    plan.model.sites * (plan.model.levels + plan.model.exchangePairs.count / Math.max(1, plan.model.sites) + 1);
  const matvecs = 300;
  return dim * termsPerState * matvecs;
}

/**
 * Seconds per unit of pointCost, for the rough time estimate `check` prints, measured with
 * solvePoint on the 2-core development machine: full spaces (pinned 6561 to 177147 states,
 * itinerant near 50,000) took 1.2 to 3.6 ns per unit; sector solves (pinned 59049 to 16.7 million
 * states, most sectors only screened) 0.53 to 1.3 ns per unit of their sectors' summed cost. With
 * these two figures every measured case fell within a factor of 2.5 of its estimate.
 */
export const SECONDS_PER_COST_UNIT = 1.5e-9;
export const SECONDS_PER_SECTOR_COST_UNIT = 0.7e-9;
/**
 * A scan's cost per point beyond solving (validating, the record synced to disk, handing out
 * work): a scan of 2000 points of 16 states took 15.7 s and one of 400 took 4.0 s with 2 workers,
 * about 15 ms of a worker's time per point.
 */
export const SECONDS_PER_SCAN_POINT = 0.015;

/** The sectors a point is solved in, counted exactly without building them (null: the full space at once). */
export function pointSectors(spec: Spec, plan: PointPlan): SectorSize[] | null {
  return plan.used ? sectorSizes(plan.model, plan.used, spec.solve.sector).filter((s) => s.dimension > 0) : null;
}

/** Rough seconds to solve a point: the cost model summed over the sectors it is solved in. */
export function estimateSeconds(plan: PointPlan, sectors: SectorSize[] | null): number {
  if (!sectors) return pointCost(plan) * SECONDS_PER_COST_UNIT;
  return (
    sectors.reduce((sum, s) => sum + pointCost({ ...plan, dimension: s.dimension }), 0) * SECONDS_PER_SECTOR_COST_UNIT
  );
}

/** The lines `check` prints after the sizes of one point: its sectors and a rough time. */
export function describeWork(spec: Spec, plan: PointPlan): string[] {
  const sectors = pointSectors(spec, plan);
  let sectorLine: string;
  if (sectors) {
    const largest = sectors.reduce((m, s) => Math.max(m, s.dimension), 0);
    const copies = sectors.reduce((n, s) => n + s.copies, 0);
    sectorLine = `sectors          ${sectors.length} to solve${copies > 0 ? ` (and ${copies} reported as their copies)` : ''}, the largest of ${largest} states (counted exactly)`;
  } else {
    sectorLine = `sectors          1: the full space of ${plan.dimension} states, no symmetry used`;
  }
  return [
    sectorLine,
    `time estimate    ${roughDuration(estimateSeconds(plan, sectors))} (rough: within a factor of 3 on a 2-core machine)`,
  ];
}

export interface ScanSizes {
  points: number;
  largest: { index: number; params: ScanParams; plan: PointPlan };
  largestMemory: { index: number; params: ScanParams; plan: PointPlan };
  /** Points whose memory estimate exceeds the limit: they will be recorded as failed. */
  overLimit: number[];
  plans: PointPlan[];
}

export function sizeScan(plan: ScanPlan, limit: number): ScanSizes {
  const plans = plan.points.map((p) => planPoint(p.spec, { maxMemory: limit }));
  let largest = 0;
  let largestMemory = 0;
  const overLimit: number[] = [];
  plans.forEach((p, i) => {
    if (p.dimension > plans[largest].dimension) largest = i;
    if (p.memory.totalBytes > plans[largestMemory].memory.totalBytes) largestMemory = i;
    if (p.memory.totalBytes > limit) overLimit.push(i);
  });
  const pick = (i: number) => ({ index: i, params: plan.points[i].params, plan: plans[i] });
  return { points: plan.points.length, largest: pick(largest), largestMemory: pick(largestMemory), overLimit, plans };
}

/**
 * What `rungchain check` prints for a spec with a [scan] section. Points are validated and sized
 * one at a time and only the figures kept, so checking a large grid holds no expanded scan.
 */
export function describeScan(raw: Record<string, unknown>, spec: Spec, limit: number, workers: number): string {
  const section = requireScan(spec);
  const points = pointCount(section);
  type Pick = { index: number; params: ScanParams; plan: PointPlan };
  let largest: Pick | null = null;
  let largestMemory: Pick | null = null;
  const overLimit: number[] = [];
  // The `workers` largest estimates, for what the workers need solving at once.
  const topMemory: number[] = [];
  let seconds = 0;
  // With [spectrum], a point's peak is the larger of its solve and the spectrum after it.
  let spectrumPeak: { index: number; bytes: number } | null = null;
  let heaviest: (Pick & { bytes: number }) | null = null;
  for (const point of eachScanPoint(raw, section)) {
    const plan = planPoint(point.spec, { maxMemory: limit });
    const pick = { index: point.index, params: point.params, plan };
    const spectrumBytes = point.spec.extra.spectrum ? spectrumMemory(point.spec, plan).totalBytes : 0;
    if (spectrumBytes > 0 && (!spectrumPeak || spectrumBytes > spectrumPeak.bytes))
      spectrumPeak = { index: point.index, bytes: spectrumBytes };
    const bytes = Math.max(plan.memory.totalBytes, spectrumBytes);
    if (!largest || plan.dimension > largest.plan.dimension) largest = pick;
    if (!heaviest || bytes > heaviest.bytes) heaviest = { ...pick, bytes };
    if (!largestMemory || plan.memory.totalBytes > largestMemory.plan.memory.totalBytes) largestMemory = pick;
    if (bytes > limit) overLimit.push(point.index);
    seconds += estimateSeconds(plan, pointSectors(point.spec, plan)) + SECONDS_PER_SCAN_POINT;
    topMemory.push(bytes);
    topMemory.sort((a, b) => b - a);
    if (topMemory.length > Math.max(1, workers)) topMemory.pop();
  }
  const big = largest as Pick;
  const heavy = largestMemory as Pick;
  const shape = section.axes.map(
    (a) => `${a.key} (${a.values.length} ${a.spacing === 'values' ? 'values' : `${a.spacing} steps`})`,
  );
  const realizations = section.axes.find((a) => a.key === REALIZATION_KEY)?.values.length;
  const lines = [
    `scan             ${points} point${points === 1 ? '' : 's'}, ${section.zip ? 'zipped' : 'grid'}: ${shape.join(section.zip ? ' with ' : ' x ')}`,
    ...(realizations === undefined
      ? []
      : [
          `realizations     ${realizations} (disorder), ${points} point${points === 1 ? '' : 's'} in all, the largest dimension over them ${big.plan.dimension}`,
        ]),
    `largest point    #${big.index} (${formatParams(big.params)}): basis dimension ${big.plan.dimension}`,
    `memory estimate  ${formatBytes(heavy.plan.memory.totalBytes)} for the largest point (#${heavy.index}), limit ${formatBytes(limit)}`,
  ];
  if (spectrumPeak) {
    const most = heaviest as Pick & { bytes: number };
    lines.push(
      `spectrum memory  ${formatBytes(spectrumPeak.bytes)} after the ground solve at most (#${spectrumPeak.index}); the point needing most, #${most.index}, takes ${formatBytes(most.bytes)} at its peak`,
    );
  }
  const atOnce = topMemory.reduce((s, b) => s + b, 0);
  lines.push(
    `                 up to ${formatBytes(atOnce)} with ${workers} worker${workers === 1 ? '' : 's'} solving at once`,
  );
  // Workers share the points; a single large point also spreads over the cores, so this holds either way.
  const perWorker = seconds / Math.max(1, workers);
  lines.push(
    `time estimate    ${roughDuration(perWorker)} with ${workers} worker${workers === 1 ? '' : 's'} (rough: within a factor of 3 on a 2-core machine)`,
  );
  if (overLimit.length > 0) {
    lines.push(
      `${overLimit.length} point${overLimit.length === 1 ? ' exceeds' : 's exceed'} the memory limit and would be recorded as failed: #${overLimit.slice(0, 10).join(', #')}${overLimit.length > 10 ? ', ...' : ''}`,
    );
  }
  return lines.join('\n');
}
