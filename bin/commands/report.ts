// `report`: one self-contained HTML file with the plots of a scan run, its transition indicators
// and finite-size fits. Also the analysis options that `summary` shares.
import path from 'node:path';
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { renderReport } from '../../src/output/report/report.js';
import { reportInputFromRun } from '../../src/output/report/reportInputFromRun.js';
import { makeFolderFor, writeFileAtomic } from '../../src/runs/runFiles.js';
import { loadScanRun } from '../../src/scan/scanRun.js';
import { addAnalysisOptions, analysisOptions, checkOutOption, type AnalysisFlags } from './shared.js';

export function registerReportCommands(program: Command): void {
  addAnalysisOptions(
    program
      .command('report')
      .description(
        'write one self-contained HTML report of a scan run: observables, heat maps, low spectrum, transition indicators, finite-size fits, populations',
      )
      .argument('<run>', 'run folder')
      .option('--out <file>', 'where to write the report (default: report.html in the run folder)')
      .option('--point <index>', 'point whose per-site populations are drawn (default: near the main indicator peak)'),
  ).action((dir: string, opts: AnalysisFlags & { out?: string; point?: string }) => {
    checkOutOption(opts.out);
    let point: number | undefined;
    if (opts.point !== undefined) {
      point = Number(opts.point);
      if (!Number.isInteger(point) || point < 0)
        throw new InputError(`--point: expected a point index, got "${opts.point}"`);
    }
    const summary = loadScanRun(dir);
    const html = renderReport(reportInputFromRun(summary, { ...analysisOptions(opts), point }));
    const out = opts.out ?? path.join(dir, 'report.html');
    makeFolderFor(out, '--out');
    writeFileAtomic(out, html);
    console.log(`report written to ${out} (${summary.counts.done} of ${summary.counts.total} points)`);
  });
}
