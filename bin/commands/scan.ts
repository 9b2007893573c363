// `scan`, `summary` and `status`: parameter scans written to run folders, and reading them back.
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { runScan } from '../../src/scan/runner.js';
import { loadScanRun } from '../../src/scan/scanRun.js';
import { longCsv, longJson, longText, statusJson, statusText, summaryCsv, summaryJson, summaryText } from '../../src/output/summary.js';
import { sideBySide, sideBySideCsv, sideBySideJson, sideBySideText } from '../../src/output/sideBySide.js';
import { analyseScan, analysisCsv, analysisInputOf, analysisText } from '../../src/analysis/transitions.js';
import { addAnalysisOptions, analysisOptions, type AnalysisFlags } from './report.js';
import { checkOutOption, collect, memoryLimit } from './shared.js';
import { parseShard, shardFromEnvironment } from '../../src/scan/shard.js';
import { registerShardCommands } from './shard.js';
import { commandLine } from '../invocation.js';

/** Exit code of a run that finished with points (or traces) that have no result; see the README. */
export const PARTIAL_FAILURE = 3;

function positiveInteger(text: string, what: string): number {
  const n = Number(text);
  if (!Number.isInteger(n) || n < 1) throw new InputError(`${what}: expected a positive integer, got "${text}"`);
  return n;
}

export function registerScanCommands(program: Command): void {
  program
    .command('scan')
    .description('solve every point of a spec\'s [scan] section on worker threads, into a run folder that survives interruption')
    .argument('<spec>', 'model spec with a [scan] section, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--out <dir>', 'run folder (default: runs/<spec name>-<identity>, so the same command resumes)')
    .option('--workers <n>', 'worker threads (default: one per core)')
    .option('--retry-failed', 'run again the points recorded as failed')
    .option('--no-warm-start', 'start every Lanczos run from a random vector (bitwise reproducible order-independent results)')
    .option('--max-memory <size>', 'a point whose estimate exceeds this is recorded as failed (default: 60% of RAM)')
    .option('--quiet', 'print nothing but errors')
    .option('--shard <i/n>', 'run only shard i of n (balanced by estimated cost); in a Slurm array task it comes from SLURM_ARRAY_TASK_ID')
    .action(async (specPath: string, opts: { set: string[]; out?: string; workers?: string; retryFailed?: boolean; warmStart: boolean; maxMemory?: string; quiet?: boolean; shard?: string }) => {
      checkOutOption(opts.out);
      const outcome = await runScan({
        shard: opts.shard !== undefined ? parseShard(opts.shard) : shardFromEnvironment(),
        specPath,
        overrides: opts.set,
        out: opts.out,
        workers: opts.workers === undefined ? undefined : positiveInteger(opts.workers, '--workers'),
        retryFailed: Boolean(opts.retryFailed),
        warmStart: opts.warmStart,
        maxMemory: memoryLimit(opts),
        maxMemoryText: opts.maxMemory,
        progress: opts.quiet ? 'none' : 'auto',
        handleSignals: true,
      });
      // 130 is the shell's code for a run stopped by Ctrl-C.
      if (outcome.interrupted) process.exitCode = 130;
      else if (outcome.failed > 0) {
        process.stderr.write(
          `rungchain: ${outcome.failed} of ${outcome.total} points failed (the reasons: ${commandLine(['summary', outcome.dir])}); rerun them with --retry-failed\n`,
        );
        process.exitCode = PARTIAL_FAILURE;
      }
    });

  registerShardCommands(program);

  addAnalysisOptions(program.command('summary'))
    .description('table of a scan run: one row per point (scanned parameters, energies, gap, observables), then transition indicators and finite-size fits')
    .argument('<run>', 'run folder')
    .option('--csv', 'tidy CSV on stdout')
    .option('--json', 'JSON array on stdout, one object per point')
    .option('--long', 'per-site and per-level observables, one value per row')
    .option('--by <axis>', 'spread one scan axis into columns, side by side (e.g. --by particles.kind, or --by kind)')
    .option('--analysis', 'only the transition indicators and finite-size fits (with --json: one JSON object; with --csv: one row per peak or fit)')
    .action((dir: string, opts: AnalysisFlags & { csv?: boolean; json?: boolean; long?: boolean; by?: string; analysis?: boolean }) => {
      if (opts.csv && opts.json) throw new InputError('choose one of --csv and --json');
      if (opts.by !== undefined && opts.long) throw new InputError('choose one of --by and --long');
      // Every option is checked before the first line is written: an error after a whole table is easy to miss.
      const chosen = analysisOptions(opts);
      const summary = loadScanRun(dir);
      const analysisAsked = opts.analysis || opts.parameter !== undefined || opts.fit.length > 0 || opts.power !== undefined || opts.terms !== undefined;
      const checkedAnalysis = analysisAsked || (!opts.json && !opts.csv && !opts.long && opts.by === undefined) ? analyseScan(analysisInputOf(summary), chosen) : null;
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
          process.stdout.write(analysisCsv(analysis, summary.section.axes.map((a) => a.key)));
          for (const note of analysis.notes) process.stderr.write(`note: ${note}\n`);
        } else console.log(analysisText(analysis));
        return;
      }
      if (opts.json) process.stdout.write(JSON.stringify(summaryJson(summary)) + '\n');
      else if (opts.csv) process.stdout.write(summaryCsv(summary));
      else {
        console.log(summaryText(summary));
        const text = analysisText(checkedAnalysis!);
        if (text) console.log(`\n${text}`);
      }
    });

  program
    .command('status')
    .description('done / failed / pending points of a run folder, and whether a scan is writing it now')
    .argument('<run>', 'run folder')
    .option('--json', 'one JSON object on stdout')
    .action((dir: string, opts: { json?: boolean }) => {
      const summary = loadScanRun(dir);
      if (opts.json) process.stdout.write(JSON.stringify(statusJson(summary)) + '\n');
      else console.log(statusText(summary));
    });
}
