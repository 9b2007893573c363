// `merge` and `slurm`: scans sharded over a batch scheduler's job array, and their merge.
import type { Command } from 'commander';
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { InputError, OptionValueError } from '../../src/errors/errors.js';
import { formatBytes } from '../../src/format/bytes.js';
import { mergeRuns, type MergeReport } from '../../src/scan/merge.js';
import { planBatch } from '../../src/scan/batch.js';
import { checkOutOption, collect, parseMemorySize, PARTIAL_FAILURE } from './shared.js';
import { makeFolderFor } from '../../src/runs/runFiles.js';
import { commandLine, invocation } from '../invocation.js';
import { shellQuote } from '../../src/format/tables.js';

function listed(indices: number[]): string {
  return indices.length <= 12
    ? indices.join(', ')
    : `${indices.slice(0, 12).join(', ')}, ... (${indices.length} in all)`;
}

export function registerShardCommands(program: Command): void {
  program
    .command('merge')
    .description(
      'merge shard run folders of one scan into one run folder (checks manifests; merging again is harmless)',
    )
    .argument('<shards...>', 'shard run folders')
    .requiredOption('--out <dir>', 'merged run folder')
    .action((dirs: string[], opts: { out: string }) => {
      checkOutOption(opts.out);
      const r = mergeInto(dirs, opts.out);
      console.log(
        `merged ${r.shards} folder${r.shards === 1 ? '' : 's'} into ${r.out}: ${r.done} done, ${r.failed} failed, ${r.missing.length} missing of ${r.total} (${r.written} records written now)`,
      );
      if (r.duplicated.length > 0)
        console.log(`points finished in more than one folder (one record kept): ${listed(r.duplicated)}`);
      if (r.missing.length > 0) {
        console.log(
          `missing points (no shard has them; rerun the shards that hold them, then merge again): ${listed(r.missing)}`,
        );
        process.exitCode = PARTIAL_FAILURE;
      }
      if (r.failed > 0) {
        console.log(
          `${r.failed} point${r.failed === 1 ? '' : 's'} failed (the reasons: ${commandLine(['summary', r.out])}); rerun ${r.failed === 1 ? 'its shard' : 'their shards'} with --retry-failed, then merge again`,
        );
        process.exitCode = PARTIAL_FAILURE;
      }
    });

  program
    .command('slurm')
    .description(
      'write a Slurm job-array batch script for a scan, with per-task memory and time from rungchain estimates',
    )
    .argument('<spec>', 'model spec with a [scan] section')
    .requiredOption('--shards <n>', 'array size: number of shards')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--run-dir <dir>', 'folder for the shard folders and the merged run (default runs/<spec>-<identity>)')
    .option('--cpus <n>', 'cores per task (worker threads)', '1')
    .option('--partition <name>', 'Slurm partition')
    .option('--account <name>', 'Slurm account')
    .option('--time-limit <minutes>', 'per-task time limit in minutes (default: estimated)')
    .option('--mem <size>', 'per-task memory, e.g. 4GB (default: estimated)')
    .option('--sbatch <option>', 'extra #SBATCH line, e.g. --sbatch=--qos=long (repeatable)', collect, [])
    .option('--rungchain <command>', 'how to run rungchain on the cluster (default: this node and this install)')
    .option('--write <file>', 'script file (default: <run-dir>/scan.sbatch); "-" prints it')
    .action(
      (
        specPath: string,
        opts: {
          shards: string;
          set: string[];
          runDir?: string;
          cpus: string;
          partition?: string;
          account?: string;
          timeLimit?: string;
          mem?: string;
          sbatch: string[];
          rungchain?: string;
          write?: string;
        },
      ) => {
        const number = (text: string, what: string): number => {
          const n = Number(text);
          if (!Number.isInteger(n) || n < 1)
            throw new InputError(`${what}: expected a positive integer, got "${text}"`);
          return n;
        };
        checkOutOption(opts.write, '--write');
        checkOutOption(opts.runDir, '--run-dir');
        const batch = planBatch({
          specPath,
          overrides: opts.set,
          shards: number(opts.shards, '--shards'),
          cpusPerTask: number(opts.cpus, '--cpus'),
          runDir: opts.runDir,
          minutes: opts.timeLimit === undefined ? undefined : number(opts.timeLimit, '--time-limit'),
          memoryBytes: opts.mem === undefined ? undefined : parseMemorySize(opts.mem, '--mem'),
          partition: opts.partition,
          account: opts.account,
          extra: opts.sbatch,
          rungchain: opts.rungchain ?? `${process.execPath} ${path.resolve(process.argv[1])}`,
        });
        if (opts.write === '-') {
          process.stdout.write(batch.script);
          return;
        }
        const file = opts.write ?? path.join(batch.runDir, 'scan.sbatch');
        makeFolderFor(file, '--write');
        writeFileSync(file, batch.script, { mode: 0o755 });
        console.log(
          `wrote ${file}: ${batch.shards} tasks of ${batch.cpusPerTask} core${batch.cpusPerTask === 1 ? '' : 's'}, ${formatBytes(batch.memoryBytes)} and ${batch.timeText} each (heaviest shard: ${batch.heaviestPoints} points)`,
        );
        console.log(`submit:  sbatch ${file}`);
        console.log(
          `then:    ${invocation()} merge ${shellQuote(batch.runDir)}/shard-* --out ${shellQuote(path.join(batch.runDir, 'merged'))}`,
        );
      },
    );
}

/** Merges, in the command line's words for a taken or clashing `--out`. */
function mergeInto(dirs: string[], out: string): MergeReport {
  try {
    return mergeRuns(dirs, out, `${out} already holds another run; choose another --out`);
  } catch (e) {
    if (e instanceof OptionValueError && e.option === 'out')
      throw new InputError(`merge: --out ${e.value} ${e.problem}`);
    throw e;
  }
}
