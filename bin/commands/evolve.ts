// `evolve` and `trace`: quench dynamics of one spec (or one trace per scan point), and reading
// a trace's run folder back.
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import {
  loadEvolveRun,
  runEvolveCommand,
  traceContract,
  traceText,
  tracesCsv,
  tracesJson,
  tracesLongCsv,
  tracesText,
} from '../../src/dynamics/evolveRun.js';
import { fmt, fmtSmall, plural } from '../../src/format/tables.js';
import { checkOutOption, collect, memoryLimit, otherRunHint, PARTIAL_FAILURE } from './shared.js';
import { commandLine } from '../invocation.js';
import { evolveReporter } from '../progress.js';

/** Refuses options that make no sense together, before any work. */
function checkEvolveOptions(opts: { json?: boolean; csv?: boolean }): void {
  if (opts.json && opts.csv) throw new InputError('choose one of --csv and --json');
}

function nonNegativeNumber(text: string, what: string): number {
  const n = Number(text);
  if (!Number.isFinite(n) || n < 0) throw new InputError(`${what}: expected a number of seconds >= 0, got "${text}"`);
  return n;
}

export function registerEvolveCommands(program: Command): void {
  program
    .command('evolve')
    .description(
      'time evolution from a prepared state ([evolve] section): populations, energy, return probability at chosen times',
    )
    .argument('<spec>', 'model spec with an [evolve] section, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--json', 'print { times, observables } as one JSON object on stdout (an array of traces for a scan)')
    .option('--csv', 'print a tidy CSV on stdout: one row per recorded time')
    .option(
      '--out <dir>',
      'write the trace to a run folder that survives interruption; the same command resumes it (default for scans: runs/<spec name>-<identity>)',
    )
    .option(
      '--checkpoint-every <seconds>',
      'seconds between saved states in the run folder (default 30; 0: at every step)',
    )
    .option('--retry-failed', 'run again the scan points recorded as failed')
    .option('--max-memory <size>', 'refuse traces whose estimate exceeds this (default: 60% of RAM)')
    .option('--quiet', 'print no progress')
    .action(
      async (
        specPath: string,
        opts: {
          set: string[];
          json?: boolean;
          csv?: boolean;
          out?: string;
          checkpointEvery?: string;
          retryFailed?: boolean;
          maxMemory?: string;
          quiet?: boolean;
        },
      ) => {
        checkEvolveOptions(opts);
        checkOutOption(opts.out);
        const maxMemory = memoryLimit(opts);
        const checkpointSeconds =
          opts.checkpointEvery === undefined
            ? undefined
            : nonNegativeNumber(opts.checkpointEvery, '--checkpoint-every');
        const resumeCommand = (dir: string): string =>
          commandLine([
            'evolve',
            specPath,
            ...opts.set.flatMap((o) => ['--set', o]),
            ...(checkpointSeconds !== undefined ? ['--checkpoint-every', String(checkpointSeconds)] : []),
            ...(opts.maxMemory !== undefined ? ['--max-memory', opts.maxMemory] : []),
            ...(opts.retryFailed ? ['--retry-failed'] : []),
            '--out',
            dir,
          ]);
        const outcome = await runEvolveCommand({
          specPath,
          overrides: opts.set,
          out: opts.out,
          maxMemory,
          memoryLimitName: '--max-memory',
          report: evolveReporter(opts.quiet),
          resumeCommand,
          otherRunHint,
          checkpointSeconds,
          retryFailed: Boolean(opts.retryFailed),
          handleSignals: true,
        });
        if (outcome.interrupted) {
          // 130 is the shell's code for a run stopped by Ctrl-C.
          process.exitCode = 130;
          return;
        }
        const contents = {
          dir: outcome.dir ?? '',
          manifest: { energy_unit_hz: outcome.energyUnitHz },
          traces: outcome.traces,
          keys: outcome.keys,
        };
        const single = outcome.keys.length === 0 && outcome.traces.length === 1;
        if (opts.json) {
          process.stdout.write(JSON.stringify(single ? traceContract(outcome.traces[0]) : tracesJson(contents)) + '\n');
        } else if (opts.csv) {
          process.stdout.write(tracesCsv(contents));
        } else {
          for (const line of outcome.unitLines) console.log(line);
          if (outcome.unitLines.length > 0) console.log('');
          if (single) {
            const t = outcome.traces[0];
            console.log(traceText(t, outcome.energyUnitHz));
            if (t.stats) {
              console.log('');
              console.log(
                `dimension ${t.stats.dimension}, Krylov size ${t.stats.krylov}, ${plural(t.stats.steps, 'step')}, ${plural(t.stats.matvecs, 'product')}, ` +
                  `error bound ${fmtSmall(t.stats.error_bound)} (tolerance ${t.stats.tolerance}), ${fmt(t.stats.seconds, 3)} s`,
              );
            }
          } else {
            console.log(tracesText(contents));
          }
        }
        for (const note of outcome.notes) process.stderr.write(`rungchain: note: ${note}\n`);
        if (outcome.dir && !opts.quiet) {
          process.stderr.write(
            `run folder ${outcome.dir} (${commandLine(['trace', outcome.dir])} --csv | --json | --long)\n`,
          );
          process.stderr.write(`HTML report: ${commandLine(['report', outcome.dir])}\n`);
        }
        const failed = outcome.traces.filter((t) => t.status === 'failed');
        if (failed.length > 0) {
          const what =
            outcome.traces.length === 1
              ? `the trace failed: ${failed[0].error}; run it again`
              : `${failed.length} of ${outcome.traces.length} traces failed (the reasons: ${commandLine(['trace', outcome.dir ?? ''])}); rerun them`;
          process.stderr.write(`rungchain: ${what} with --retry-failed\n`);
          process.exitCode = PARTIAL_FAILURE;
        }
      },
    );

  program
    .command('trace')
    .description('read a time-trace run folder written by `evolve --out`: a table, or tidy CSV / JSON')
    .argument('<run>', 'run folder')
    .option('--csv', 'tidy CSV on stdout: one row per point and recorded time')
    .option(
      '--json',
      'JSON array on stdout, one object per trace: parameters, status, times, observables indexed by time',
    )
    .option('--long', 'with --csv: populations, level_mean and spread per site and level, one value per row')
    .action((dir: string, opts: { csv?: boolean; json?: boolean; long?: boolean }) => {
      checkEvolveOptions(opts);
      const contents = loadEvolveRun(dir);
      if (opts.json) process.stdout.write(JSON.stringify(tracesJson(contents)) + '\n');
      else if (opts.csv || opts.long) process.stdout.write(opts.long ? tracesLongCsv(contents) : tracesCsv(contents));
      else console.log(tracesText(contents));
    });
}
