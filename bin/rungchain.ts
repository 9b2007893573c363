#!/usr/bin/env node
// The command line: each command family registers itself from bin/commands/; errors become one line.

import { Command, CommanderError } from 'commander';
import { isRungchainError, isSystemError, OptionValueError, systemErrorCause } from '../src/errors/errors.js';
import { rungchainVersion } from '../src/runs/version.js';
import { registerSolveCommands } from './commands/solve.js';
import { registerScanCommands } from './commands/scan.js';
import { registerShardCommands } from './commands/shard.js';
import { registerSummaryCommands } from './commands/summary.js';
import { registerEvolveCommands } from './commands/evolve.js';
import { registerReportCommands } from './commands/report.js';
import { registerSpectrumCommands } from './commands/spectrum.js';
import { registerThermalCommands } from './commands/thermal.js';

const program = new Command();
program
  .name('rungchain')
  .description('Exact diagonalization of lattice models with a synthetic dimension')
  .version(rungchainVersion())
  .exitOverride();

registerSolveCommands(program);
registerScanCommands(program);
registerShardCommands(program);
registerSummaryCommands(program);
registerEvolveCommands(program);
registerReportCommands(program);
registerSpectrumCommands(program);
registerThermalCommands(program);

// A reader that stops early (`| head`) closes the pipe: the output is no longer wanted, so stop
// quietly with success, as `rungchain summary RUN --csv | head` should read under `set -o pipefail`.
process.stdout.on('error', (e: NodeJS.ErrnoException) => {
  if (e.code === 'EPIPE') process.exit(0);
  process.stderr.write(`rungchain: cannot write to standard output: ${e.message}\n`);
  process.exit(2);
});
// Messages on a closed stderr are lost; the work itself goes on.
process.stderr.on('error', () => undefined);

/** A refused option value under the flag that set it: commander reads `--max-memory` into `maxMemory`. */
function optionValueMessage(e: OptionValueError): string {
  const flag = `--${e.option.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`)}`;
  return `${flag} ${e.value}: ${e.problem}`;
}

async function main(): Promise<void> {
  try {
    await program.parseAsync(process.argv);
  } catch (e) {
    if (e instanceof CommanderError) {
      // Help and version are successful exits; anything else is a usage error.
      process.exit(e.exitCode === 0 ? 0 : 2);
    }
    if (isRungchainError(e)) {
      process.stderr.write(`rungchain: ${e instanceof OptionValueError ? optionValueMessage(e) : e.message}\n`);
      process.exit(2);
    }
    // A file-system call that failed where no module expected it: still the path and the cause.
    if (isSystemError(e)) {
      const where = [e.path, (e as { dest?: string }).dest].filter((p) => p !== undefined).join(' -> ');
      process.stderr.write(`rungchain: cannot ${e.syscall}${where ? ` ${where}` : ''}: ${systemErrorCause(e)}\n`);
      process.exit(2);
    }
    const message = e instanceof Error ? e.message : String(e);
    process.stderr.write(`rungchain: internal error: ${message}\n`);
    if (process.env.RUNGCHAIN_DEBUG && e instanceof Error) process.stderr.write(`${e.stack}\n`);
    process.exit(1);
  }
}

void main();
