// `report`: one self-contained HTML file with the plots of a scan run, its transition indicators
// and finite-size fits. Also the analysis options that `summary` shares.
import path from 'node:path';
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { renderReport, reportInputFromRun } from '../../src/output/report/report.js';
import { makeFolderFor, writeFileAtomic } from '../../src/runs/runFiles.js';
import { loadScanRun } from '../../src/scan/scanRun.js';
import type { AnalysisOptions } from '../../src/analysis/transitions.js';
import { checkOutOption, collect } from './shared.js';

export interface AnalysisFlags {
  fit: string[];
  power?: string;
  terms?: string;
  parameter?: string;
}

/** Adds the options that choose the indicators' axis and the finite-size fits. */
export function addAnalysisOptions(command: Command): Command {
  return command
    .option('--parameter <key>', 'axis the transition indicators run along (default: the last numeric axis that is not a size)')
    .option('--fit <observable>', 'fit this observable against 1/size^p when chain.sites or levels.count is scanned: E0, E0/L, gap, string_width, entropy, ... (repeatable)', collect, [])
    .option('--power <p>', 'power p of 1/size in the finite-size fits (default 1)')
    .option('--terms <k>', 'coefficients of the fit polynomial in 1/size^p (default 2: a straight line)');
}

export function analysisOptions(flags: AnalysisFlags): AnalysisOptions {
  const options: AnalysisOptions = { fit: flags.fit, parameter: flags.parameter };
  if (flags.power !== undefined) {
    const p = Number(flags.power);
    if (!Number.isFinite(p) || p <= 0) throw new InputError(`--power: expected a positive number, got "${flags.power}"`);
    options.power = p;
  }
  if (flags.terms !== undefined) {
    const k = Number(flags.terms);
    if (!Number.isInteger(k) || k < 1) throw new InputError(`--terms: expected a positive integer, got "${flags.terms}"`);
    options.terms = k;
  }
  return options;
}

export function registerReportCommands(program: Command): void {
  addAnalysisOptions(
    program
      .command('report')
      .description('write one self-contained HTML report of a scan run: observables, heat maps, low spectrum, transition indicators, finite-size fits, populations')
      .argument('<run>', 'run folder')
      .option('--out <file>', 'where to write the report (default: report.html in the run folder)')
      .option('--point <index>', 'point whose per-site populations are drawn (default: near the main indicator peak)'),
  ).action((dir: string, opts: AnalysisFlags & { out?: string; point?: string }) => {
    checkOutOption(opts.out);
    let point: number | undefined;
    if (opts.point !== undefined) {
      point = Number(opts.point);
      if (!Number.isInteger(point) || point < 0) throw new InputError(`--point: expected a point index, got "${opts.point}"`);
    }
    const summary = loadScanRun(dir);
    const html = renderReport(reportInputFromRun(summary, { ...analysisOptions(opts), point }));
    const out = opts.out ?? path.join(dir, 'report.html');
    makeFolderFor(out, '--out');
    writeFileAtomic(out, html);
    console.log(`report written to ${out} (${summary.counts.done} of ${summary.counts.total} points)`);
  });
}
