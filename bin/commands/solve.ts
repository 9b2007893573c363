// `check`, `solve` and `demo`: one model spec at a time.
import type { Command } from 'commander';
import { loadSpec } from '../../src/spec.js';
import { planPoint, solvePoint } from '../../src/point.js';
import { describePlan, describeRecord } from '../../src/tables.js';
import { runDemo } from '../../src/demo.js';
import { collect, memoryLimit } from './shared.js';
import { describeLabEnergies, labEnergies, labUnits } from '../../src/units.js';
import { describeScan, expandScan } from '../../src/scan.js';
import { defaultWorkerCount } from '../../src/scanRunner.js';

export function registerSolveCommands(program: Command): void {
  program
    .command('check')
    .description('size a model spec: basis dimension, operator storage, memory estimate (allocates nothing large)')
    .argument('<spec>', 'model spec, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--max-memory <size>', 'memory limit to check against, e.g. 8GB')
    .action((specPath: string, opts: { set: string[]; maxMemory?: string }) => {
      const { raw, spec } = loadSpec(specPath, opts.set);
      const limit = memoryLimit(opts);
      if (spec.extra.scan) {
        console.log(describeScan(expandScan(raw, spec), limit, defaultWorkerCount()));
        return;
      }
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
      // With [units], energies also in Hz (a `units` block in JSON, lines under the table).
      const units = labUnits(spec);
      if (opts.json) process.stdout.write(JSON.stringify(units ? { ...record, units: labEnergies(units, record.energies, record.gap) } : record) + '\n');
      else {
        console.log(describeRecord(record));
        if (units) console.log('\n' + describeLabEnergies(units, record.energies, record.gap).join('\n'));
      }
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
}
