#!/usr/bin/env node
// The command line: parses arguments, calls the engine, prints. No physics here.

import { Command, CommanderError } from 'commander';
import { isRungchainError } from '../src/errors.js';
import { loadSpec } from '../src/spec.js';
import { planPoint, solvePoint } from '../src/point.js';
import { defaultMemoryLimit, parseMemorySize } from '../src/resources.js';
import { describePlan, describeRecord } from '../src/tables.js';
import { runDemo } from '../src/demo.js';

const collect = (value: string, previous: string[]) => previous.concat([value]);

function memoryLimit(opts: { maxMemory?: string }): number {
  return opts.maxMemory ? parseMemorySize(opts.maxMemory) : defaultMemoryLimit();
}

const program = new Command();
program
  .name('rungchain')
  .description('Exact diagonalization of lattice models with a synthetic dimension')
  .version('0.1.0')
  .showHelpAfterError(false)
  .exitOverride();

program
  .command('check')
  .description('size a model spec: basis dimension, operator storage, memory estimate (allocates nothing large)')
  .argument('<spec>', 'model spec, .toml or .json')
  .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
  .option('--max-memory <size>', 'memory limit to check against, e.g. 8GB')
  .action((specPath: string, opts: { set: string[]; maxMemory?: string }) => {
    const { spec } = loadSpec(specPath, opts.set);
    const limit = memoryLimit(opts);
    const plan = planPoint(spec);
    console.log(describePlan(plan, limit));
    if (plan.memory.totalBytes > limit) console.log('solve would refuse this problem: the estimate exceeds the limit');
  });

program
  .command('solve')
  .description('ground state, low spectrum and observables of one model spec')
  .argument('<spec>', 'model spec, .toml or .json')
  .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
  .option('--json', 'print the result as one JSON object on stdout')
  .option('--max-memory <size>', 'refuse problems whose estimate exceeds this (default: 60% of RAM)')
  .action((specPath: string, opts: { set: string[]; json?: boolean; maxMemory?: string }) => {
    const { spec } = loadSpec(specPath, opts.set);
    const { record } = solvePoint(spec, { maxMemory: memoryLimit(opts) });
    if (opts.json) process.stdout.write(JSON.stringify(record) + '\n');
    else console.log(describeRecord(record));
    if (!record.solver.converged) {
      process.stderr.write(`rungchain: warning: not converged to tolerance ${spec.solve.tolerance}; residuals are in the output\n`);
    }
  });

program
  .command('demo')
  .description('solve a built-in invented scenario and print what it shows')
  .action(async () => {
    await runDemo((line) => console.log(line));
  });

async function main(): Promise<void> {
  try {
    await program.parseAsync(process.argv);
  } catch (e) {
    if (e instanceof CommanderError) {
      // Help and version are successful exits; anything else is a usage error.
      process.exit(e.exitCode === 0 ? 0 : 2);
    }
    if (isRungchainError(e)) {
      process.stderr.write(`rungchain: ${e.message}\n`);
      process.exit(2);
    }
    const message = e instanceof Error ? e.message : String(e);
    process.stderr.write(`rungchain: internal error: ${message}\n`);
    if (process.env.RUNGCHAIN_DEBUG && e instanceof Error) process.stderr.write(`${e.stack}\n`);
    process.exit(1);
  }
}

void main();
