// `report`: one self-contained HTML file with the plots of a run folder: a scan's observables,
// transition indicators and finite-size fits, or a time trace's light cone, observables against
// time and error bounds. Also the analysis options that `summary` shares.
import path from 'node:path';
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { loadEvolveRun } from '../../src/dynamics/evolveRun.js';
import { renderReport } from '../../src/output/report/report.js';
import { reportInputFromRun } from '../../src/output/report/reportInputFromRun.js';
import { renderTraceReport } from '../../src/output/report/traceReport.js';
import { traceReportInputFromRun } from '../../src/output/report/traceReportInputFromRun.js';
import { makeFolderFor, readManifest, writeFileAtomic } from '../../src/runs/runFiles.js';
import { loadScanRun } from '../../src/scan/scanRun.js';
import { addAnalysisOptions, analysisOptions, checkOutOption, type AnalysisFlags } from './shared.js';

type ReportFlags = AnalysisFlags & { out?: string; point?: string };

/** The analysis flags belong to scans: a trace has no scanned parameter to analyse or fit. */
function refuseScanFlags(opts: ReportFlags, dir: string): void {
  const given = [
    opts.parameter !== undefined && '--parameter',
    opts.fit.length > 0 && '--fit',
    opts.power !== undefined && '--power',
    opts.terms !== undefined && '--terms',
  ].find((flag): flag is string => typeof flag === 'string');
  if (given)
    throw new InputError(`${given}: applies to the report of a scan; ${dir} holds a time trace (evolve --out)`);
}

export function registerReportCommands(program: Command): void {
  addAnalysisOptions(
    program
      .command('report')
      .description(
        'write one self-contained HTML report of a run folder: for a scan, observables, heat maps, low spectrum, transition indicators, finite-size fits, populations; for a time trace, sites against time, return probability, string width, energy, error bounds',
      )
      .argument('<run>', 'run folder (of `scan` or of `evolve --out`)')
      .option('--out <file>', 'where to write the report (default: report.html in the run folder)')
      .option(
        '--point <index>',
        'scan: point whose per-site populations are drawn (default: near the main indicator peak); traces: the trace whose heat maps are drawn',
      ),
  ).action((dir: string, opts: ReportFlags) => {
    checkOutOption(opts.out);
    let point: number | undefined;
    if (opts.point !== undefined) {
      point = Number(opts.point);
      if (!Number.isInteger(point) || point < 0)
        throw new InputError(`--point: expected a point index, got "${opts.point}"`);
    }
    const out = opts.out ?? path.join(dir, 'report.html');
    if (readManifest(dir).kind === 'evolve') {
      refuseScanFlags(opts, dir);
      const contents = loadEvolveRun(dir);
      const html = renderTraceReport(traceReportInputFromRun(contents, { point }));
      makeFolderFor(out, '--out');
      writeFileAtomic(out, html);
      const done = contents.traces.filter((t) => t.status === 'done').length;
      console.log(`report written to ${out} (${done} of ${contents.traces.length} traces finished)`);
      return;
    }
    const summary = loadScanRun(dir);
    const html = renderReport(reportInputFromRun(summary, { ...analysisOptions(opts), point }));
    makeFolderFor(out, '--out');
    writeFileAtomic(out, html);
    console.log(`report written to ${out} (${summary.counts.done} of ${summary.counts.total} points)`);
  });
}
