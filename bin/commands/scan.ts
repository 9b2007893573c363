// `scan`, `summary` and `status`: parameter scans written to run folders, and reading them back.
import type { Command } from 'commander';
import { InputError } from '../../src/errors/errors.js';
import { runScan } from '../../src/scan/runner.js';
import { checkOutOption, collect, memoryLimit, otherRunHint, PARTIAL_FAILURE } from './shared.js';
import type { Shard } from '../../src/scan/shard.js';
import { commandLine } from '../invocation.js';
import { scanReporter } from '../progress.js';

function positiveInteger(text: string, what: string): number {
  const n = Number(text);
  if (!Number.isInteger(n) || n < 1) throw new InputError(`${what}: expected a positive integer, got "${text}"`);
  return n;
}

export function parseShard(text: string, source = '--shard'): Shard {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const index = m ? Number(m[1]) : NaN;
  const count = m ? Number(m[2]) : NaN;
  if (!m || count < 1 || index < 1 || index > count) {
    throw new InputError(`${source}: expected i/n with 1 <= i <= n (shard i of n), got "${text}"`);
  }
  return { index, count, source };
}

/**
 * The shard of a job-array task, from the batch scheduler's environment: Slurm sets
 * SLURM_ARRAY_TASK_ID, SLURM_ARRAY_TASK_MIN and SLURM_ARRAY_TASK_COUNT in each array task.
 * Null outside an array task.
 */
export function shardFromEnvironment(env: NodeJS.ProcessEnv = process.env): Shard | null {
  const id = env.SLURM_ARRAY_TASK_ID;
  if (id === undefined || id === '') return null;
  const count = Number(env.SLURM_ARRAY_TASK_COUNT);
  const min = env.SLURM_ARRAY_TASK_MIN === undefined ? 0 : Number(env.SLURM_ARRAY_TASK_MIN);
  const index = Number(id) - min + 1;
  const source = `SLURM_ARRAY_TASK_ID=${id} (min ${min}, count ${env.SLURM_ARRAY_TASK_COUNT})`;
  if (!Number.isInteger(count) || !Number.isInteger(index) || count < 1 || index < 1 || index > count) {
    throw new InputError(
      `${source}: cannot tell the shard; the array must be contiguous (e.g. --array=1-${Number.isInteger(count) ? count : 'N'}), or pass --shard i/n`,
    );
  }
  return { index, count, source };
}

export function registerScanCommands(program: Command): void {
  program
    .command('scan')
    .description(
      "solve every point of a spec's [scan] section on worker threads, into a run folder that survives interruption",
    )
    .argument('<spec>', 'model spec with a [scan] section, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--out <dir>', 'run folder (default: runs/<spec name>-<identity>, so the same command resumes)')
    .option('--workers <n>', 'worker threads (default: one per core)')
    .option('--retry-failed', 'run again the points recorded as failed')
    .option(
      '--no-warm-start',
      'start every Lanczos run from a random vector (bitwise reproducible order-independent results)',
    )
    .option('--max-memory <size>', 'a point whose estimate exceeds this is recorded as failed (default: 60% of RAM)')
    .option('--quiet', 'print nothing but errors')
    .option(
      '--shard <i/n>',
      'run only shard i of n (balanced by estimated cost); in a Slurm array task it comes from SLURM_ARRAY_TASK_ID',
    )
    .action(
      async (
        specPath: string,
        opts: {
          set: string[];
          out?: string;
          workers?: string;
          retryFailed?: boolean;
          warmStart: boolean;
          maxMemory?: string;
          quiet?: boolean;
          shard?: string;
        },
      ) => {
        checkOutOption(opts.out);
        const shard = opts.shard !== undefined ? parseShard(opts.shard) : shardFromEnvironment();
        const workers = opts.workers === undefined ? undefined : positiveInteger(opts.workers, '--workers');
        const resumeCommand = (dir: string): string =>
          commandLine([
            'scan',
            specPath,
            ...opts.set.flatMap((o) => ['--set', o]),
            ...(shard && shard.source === '--shard' ? ['--shard', `${shard.index}/${shard.count}`] : []),
            ...(opts.warmStart === false ? ['--no-warm-start'] : []),
            ...(opts.maxMemory !== undefined ? ['--max-memory', opts.maxMemory] : []),
            ...(workers !== undefined ? ['--workers', String(workers)] : []),
            ...(opts.retryFailed ? ['--retry-failed'] : []),
            '--out',
            dir,
          ]);
        const outcome = await runScan({
          shard,
          specPath,
          overrides: opts.set,
          out: opts.out,
          workers,
          retryFailed: Boolean(opts.retryFailed),
          warmStart: opts.warmStart,
          maxMemory: memoryLimit(opts),
          memoryLimitName: '--max-memory',
          report: scanReporter(opts.quiet),
          resumeCommand,
          handleSignals: true,
          folderHints: { otherRun: otherRunHint, otherShard: 'choose another --out' },
        });
        if (!opts.quiet && outcome.nothingToDo) {
          const retry = outcome.failed > 0 ? ' (rerun failed points with --retry-failed)' : '';
          process.stderr.write(
            `nothing to do in ${outcome.dir}: ${outcome.done} done, ${outcome.failed} failed of ${outcome.total}${retry}\n`,
          );
        }
        // After a scan that solved its points (not one with nothing left to do, nor an interrupted one).
        if (!opts.quiet && !outcome.interrupted && outcome.ran > 0)
          process.stderr.write(`results: ${commandLine(['summary', outcome.dir])}  (--csv, --json, --long)\n`);
        // 130 is the shell's code for a run stopped by Ctrl-C.
        if (outcome.interrupted) process.exitCode = 130;
        else if (outcome.failed > 0) {
          process.stderr.write(
            `rungchain: ${outcome.failed} of ${outcome.total} points failed (the reasons: ${commandLine(['summary', outcome.dir])}); rerun them with --retry-failed\n`,
          );
          process.exitCode = PARTIAL_FAILURE;
        }
      },
    );
}
