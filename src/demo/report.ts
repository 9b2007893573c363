// The demo's reports: the invented X-47 ring scanned over the exchange V for three ladder lengths N,
// solved here line by line (each point's overlap with the previous ground state kept for the
// fidelity susceptibility), analysed and written as the same HTML report `rungchain report` makes;
// and the demo's quench written as the report `rungchain report` makes of a trace run folder.

import path from 'node:path';
import { DEMO_SPEC } from './spec.js';
import { solvePoint } from '../point/solvePoint.js';
import { renderReport } from '../output/report/report.js';
import { makeFolderFor, writeFileAtomic } from '../runs/runFiles.js';
import { groundSpaceOverlap } from '../observables/overlap.js';
import { validateSpec } from '../spec/spec.js';
import { analyseScan, type AnalysisInput, type AnalysisPoint } from '../analysis/transitions.js';
import { planEvolution, runEvolution } from '../dynamics/evolution.js';
import { labUnits } from '../spec/units.js';
import { renderTraceReport } from '../output/report/traceReport.js';
import { traceReportInput } from '../output/report/traceReportInputFromRun.js';
import { DYNAMICS_DEMO_SPEC } from './dynamics.js';

export const DEMO_REPORT_FILE = path.join('runs', 'demo-report.html');

export function writeDemoReport(print: (line: string) => void, file = DEMO_REPORT_FILE): string {
  const counts = [3, 4, 5];
  const strengths = Array.from({ length: 12 }, (_, k) => Number((0.5 + 0.5 * k).toFixed(2)));
  const input: AnalysisInput = {
    axes: [
      { key: 'levels.count', values: counts },
      { key: 'exchange.strength', values: strengths },
    ],
    zip: false,
    points: [],
  };
  for (const N of counts) {
    let previous: { states: Float64Array[]; isComplex: boolean } | null = null;
    for (const V of strengths) {
      const raw = structuredClone(DEMO_SPEC);
      raw.levels.count = N;
      raw.exchange.strength = V;
      raw.solve.states = 3;
      const spec = validateSpec(raw);
      const solved = solvePoint(spec);
      const isComplex = solved.groundStates[0]?.length === 2 * solved.record.basis.dimension;
      const point: AnalysisPoint = {
        index: input.points.length,
        params: { 'levels.count': N, 'exchange.strength': V },
        record: solved.record,
        overlapPrevious: previous ? groundSpaceOverlap(previous.states, solved.groundStates, isComplex) : null,
      };
      input.points.push(point);
      previous = { states: solved.groundStates, isComplex };
    }
  }
  const analysis = analyseScan(input, { fit: ['string_width', 'E0/L'], power: 1 });
  const html = renderReport({
    ...input,
    title: 'rungchain demo: molecule X-47 in a ring of six tweezers',
    about: [
      'An invented scenario: six polar molecules in a ring of optical tweezers, their lowest N rotational levels dressed by microwaves (tunnelling J = 1) and coupled by nearest-neighbour dipolar exchange V with rigid-rotor weights.',
      'Scanned: V from 0.5 to 6 for N = 3, 4 and 5 levels. Finite-size trends are taken against 1/N: a bound string keeps a finite width as N grows.',
    ],
    analysis,
    energyUnitHz: null,
  });
  makeFolderFor(file, 'the demo report');
  writeFileAtomic(file, html);
  print(`Report of a scan over V and N (plots, transition indicators, finite-size trends): ${path.resolve(file)}`);
  print('Open it in any browser; `rungchain report RUN` writes the same for your own scans.');
  return file;
}

export const DEMO_TRACE_REPORT_FILE = path.join('runs', 'demo-trace-report.html');

/**
 * The demo's quench as a trace report: the excitation handed along the seven X-47 molecules,
 * recorded at 61 times (the printed table shows 7 of them), all in a fraction of a second.
 */
export function writeDemoTraceReport(print: (line: string) => void, file = DEMO_TRACE_REPORT_FILE): string {
  const raw = structuredClone(DYNAMICS_DEMO_SPEC) as Record<string, unknown> & typeof DYNAMICS_DEMO_SPEC;
  raw.evolve.times = { ...raw.evolve.times, steps: 60 };
  const spec = validateSpec(structuredClone(raw));
  const result = runEvolution(planEvolution(raw, spec));
  const input = traceReportInput({
    title: 'rungchain demo: an excitation handed along seven X-47 molecules',
    about: [
      'An invented scenario: seven polar molecules in tweezers 480 nm apart, microwaves off; a pi pulse lifts the middle one into its first rotational level and dipolar exchange (1/r³) passes the excitation on.',
      'Written by `rungchain demo`; `rungchain evolve SPEC --out DIR` then `rungchain report DIR` writes the same for your own traces.',
    ],
    spec: raw,
    traces: [
      {
        point: 0,
        params: {},
        status: 'done',
        frames: result.frames.map((f, k) => ({ ...f, time_ms: result.timesMs ? result.timesMs[k] : null })),
        stats: result.stats,
        notes: result.notes,
      },
    ],
    keys: [],
    energyUnitHz: labUnits(spec)?.energyUnitHz ?? null,
  });
  makeFolderFor(file, 'the demo trace report');
  writeFileAtomic(file, renderTraceReport(input));
  print(`Report of the quench (each site against time, return probability, error bounds): ${path.resolve(file)}`);
  print('`rungchain evolve SPEC --out DIR` and then `rungchain report DIR` write the same for your own traces.');
  return file;
}
