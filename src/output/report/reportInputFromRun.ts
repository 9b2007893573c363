// The report's input from a scan run folder: its points analysed, and its laboratory energy unit
// read back from the run's spec when every solved point has the same one.

import path from 'node:path';
import { OptionValueError } from '../../errors/errors.js';
import { pointTree } from '../../scan/plan.js';
import { validateSpec } from '../../spec/spec.js';
import type { ScanRunSummary } from '../../scan/scanRun.js';
import { analyseScan, analysisInputOf, type AnalysisOptions } from '../../analysis/transitions.js';
import { labUnits } from '../../spec/units.js';
import type { ReportInput } from './report.js';
import { logScaleAxes } from './plotAxes.js';
import { arrayLayout, type ArrayLayout } from './arrayPicture.js';

export interface RunReportOptions extends AnalysisOptions {
  point?: number;
}

/**
 * The model's energy unit in Hz when every solved point of the run has the same laboratory units,
 * else null (model units); a run without [units] gives null.
 */
function runEnergyUnitHz(summary: ScanRunSummary): { hz: number | null; note: string | null } {
  const raw = summary.manifest.spec;
  if (typeof raw !== 'object' || raw === null || !('units' in raw)) return { hz: null, note: null };
  let hz: number | null = null;
  for (const row of summary.rows) {
    if (row.record?.status !== 'done') continue;
    let value: number | undefined;
    try {
      value = labUnits(validateSpec(pointTree(raw, row.params)))?.energyUnitHz;
    } catch {
      value = undefined;
    }
    if (value === undefined)
      return { hz: null, note: 'laboratory units could not be read back from the run; energies are in model units' };
    if (hz !== null && Math.abs(value - hz) > 1e-9 * Math.abs(hz)) {
      return {
        hz: null,
        note: 'the energy unit in Hz changes across the scan (it follows a scanned coupling); energies are in model units',
      };
    }
    hz = value;
  }
  return { hz, note: null };
}

/** `exchange.range` of every solved point when they agree, else null. */
function runExchangeRange(summary: ScanRunSummary): 'nearest' | 'dipolar' | null {
  const raw = summary.manifest.spec;
  if (typeof raw !== 'object' || raw === null) return null;
  let range: 'nearest' | 'dipolar' | null = null;
  for (const row of summary.rows) {
    if (row.record?.status !== 'done') continue;
    let value: 'nearest' | 'dipolar';
    try {
      value = validateSpec(pointTree(raw as Record<string, unknown>, row.params)).exchange.range;
    } catch {
      return null;
    }
    if (range !== null && value !== range) return null;
    range = value;
  }
  return range;
}

/** Everything the report of a scan run folder needs, with the analysis done. */
export function reportInputFromRun(summary: ScanRunSummary, options: RunReportOptions = {}): ReportInput {
  const input = analysisInputOf(summary);
  const analysis = analyseScan(input, options);
  const { hz, note } = runEnergyUnitHz(summary);
  if (note) analysis.notes.push(note);
  if (options.point !== undefined && !input.points.some((p) => p.index === options.point && p.record !== null)) {
    throw new OptionValueError(
      'point',
      String(options.point),
      `no solved point with that index in ${summary.dir} (points 0 to ${input.points.length - 1})`,
    );
  }
  const specName = typeof summary.manifest.spec_path === 'string' ? path.basename(summary.manifest.spec_path) : 'scan';
  return {
    ...input,
    title: `rungchain report: ${specName}`,
    about: [`Run folder ${summary.dir}, started ${summary.manifest.created} (rungchain ${summary.manifest.version}).`],
    analysis,
    energyUnitHz: hz,
    chosenPoint: options.point,
    exchangeRange: runExchangeRange(summary),
    logAxes: logScaleAxes(summary.section.axes),
    layoutOf: (index) => pointLayout(summary, index),
    spectra: new Map(summary.rows.flatMap((r) => (r.record?.spectrum ? [[r.index, r.record.spectrum] as const] : []))),
  };
}

/** The sites of one point of the run (its spec with its scanned values); null when it cannot be read back. */
function pointLayout(summary: ScanRunSummary, index: number): ArrayLayout | null {
  const raw = summary.manifest.spec;
  const row = summary.rows.find((r) => r.index === index);
  if (typeof raw !== 'object' || raw === null || !row) return null;
  try {
    return arrayLayout(validateSpec(pointTree(raw as Record<string, unknown>, row.params)));
  } catch {
    return null;
  }
}
