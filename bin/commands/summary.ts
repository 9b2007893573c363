// Reading a scan's run folder: the summary table (with transition indicators and fits) and the status.
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { loadScanRun, type ScanRunSummary } from '../../src/scan/scanRun.js';
import { shellCommand } from '../../src/format/tables.js';
import {
  longCsv,
  longJson,
  longText,
  statusJson,
  statusText,
  summaryCsv,
  summaryJson,
  summaryText,
} from '../../src/output/summary.js';
import { ensembleCsv, ensembleJson, ensembleText, isEnsemble } from '../../src/output/ensemble.js';
import { sideBySide, sideBySideCsv, sideBySideJson, sideBySideText } from '../../src/output/sideBySide.js';
import { analyseScan, analysisCsv, analysisInputOf, analysisText } from '../../src/analysis/transitions.js';
import { addAnalysisOptions, analysisOptions, type AnalysisFlags } from './shared.js';
import { invocation } from '../invocation.js';

export function registerSummaryCommands(program: Command): void {
  addAnalysisOptions(program.command('summary'))
    .description(
      'table of a scan run: one row per point (scanned parameters, energies, gap, observables), then transition indicators and finite-size fits',
    )
    .argument('<run>', 'run folder')
    .option('--csv', 'tidy CSV on stdout')
    .option('--json', 'JSON array on stdout, one object per point')
    .option('--long', 'per-site, per-level and per-momentum observables, one value per row')
    .option(
      '--realizations',
      'a disorder ensemble: every realization one by one, as any scan, instead of means over them',
    )
    .option('--by <axis>', 'spread one scan axis into columns, side by side (e.g. --by particles.kind, or --by kind)')
    .option(
      '--analysis',
      'only the transition indicators and finite-size fits (with --json: one JSON object; with --csv: one row per peak or fit)',
    )
    .action(
      (
        dir: string,
        opts: AnalysisFlags & {
          csv?: boolean;
          json?: boolean;
          long?: boolean;
          by?: string;
          analysis?: boolean;
          realizations?: boolean;
        },
      ) => {
        if (opts.csv && opts.json) throw new InputError('choose one of --csv and --json');
        if (opts.by !== undefined && opts.long) throw new InputError('choose one of --by and --long');
        // Every option is checked before the first line is written: an error after a whole table is easy to miss.
        const chosen = analysisOptions(opts);
        const summary = loadScanRun(dir);
        const analysisAsked =
          opts.analysis ||
          opts.parameter !== undefined ||
          opts.fit.length > 0 ||
          opts.power !== undefined ||
          opts.terms !== undefined;
        const checkedAnalysis =
          analysisAsked || (!opts.json && !opts.csv && !opts.long && opts.by === undefined)
            ? analyseScan(analysisInputOf(summary), chosen)
            : null;
        if (opts.by !== undefined) {
          const view = sideBySide(summary, opts.by);
          if (opts.json) process.stdout.write(JSON.stringify(sideBySideJson(view)) + '\n');
          else if (opts.csv) process.stdout.write(sideBySideCsv(view));
          else console.log(sideBySideText(view));
          return;
        }
        if (opts.long) {
          if (opts.json) process.stdout.write(JSON.stringify(longJson(summary)) + '\n');
          else if (opts.csv) process.stdout.write(longCsv(summary));
          else console.log(longText(summary));
          return;
        }
        if (opts.analysis) {
          const analysis = analyseScan(analysisInputOf(summary), analysisOptions(opts));
          if (opts.json) process.stdout.write(JSON.stringify(analysis) + '\n');
          else if (opts.csv) {
            process.stdout.write(
              analysisCsv(
                analysis,
                summary.section.axes.map((a) => a.key),
              ),
            );
            for (const note of analysis.notes) process.stderr.write(`note: ${note}\n`);
          } else console.log(analysisText(analysis));
          return;
        }
        // A disorder ensemble: means over its realizations per combination of the other axes.
        if (isEnsemble(summary) && !opts.realizations) {
          if (opts.json) process.stdout.write(JSON.stringify(ensembleJson(summary)) + '\n');
          else if (opts.csv) process.stdout.write(ensembleCsv(summary));
          else console.log(ensembleText(summary));
          return;
        }
        if (opts.json) process.stdout.write(JSON.stringify(summaryJson(summary)) + '\n');
        else if (opts.csv) process.stdout.write(summaryCsv(summary));
        else {
          console.log(summaryText(summary));
          const text = analysisText(checkedAnalysis!);
          if (text) console.log(`\n${text}`);
        }
      },
    );

  program
    .command('status')
    .description('done / failed / pending points of a run folder, and whether a scan is writing it now')
    .argument('<run>', 'run folder')
    .option('--json', 'one JSON object on stdout')
    .action((dir: string, opts: { json?: boolean }) => {
      const summary = loadScanRun(dir);
      if (opts.json) process.stdout.write(JSON.stringify(statusJson(summary)) + '\n');
      else
        console.log(
          statusText(summary, { resumeCommand: scanResumeCommand, retryFailed: 'rerun with --retry-failed' }),
        );
    });
}

/** The scan command that continues a run folder, as the user can paste it here. */
function scanResumeCommand(summary: ScanRunSummary): string {
  const { manifest } = summary;
  const overrides = Array.isArray(manifest.overrides)
    ? (manifest.overrides as string[]).flatMap((o) => ['--set', o])
    : [];
  const shard = manifest.shard as { index: number; count: number } | undefined;
  const shardArgs = shard ? ['--shard', `${shard.index}/${shard.count}`] : [];
  return shellCommand(invocation(), [
    'scan',
    String(manifest.spec_path),
    ...overrides,
    ...shardArgs,
    '--out',
    summary.dir,
  ]);
}
