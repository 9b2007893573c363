// `thermal`: thermal equilibrium of one model spec at the temperatures of its [thermal] section.
import type { Command } from 'commander';
import { loadSpec } from '../../src/spec/spec.js';
import { InputError } from '../../src/errors/errors.js';
import { assertWithinMemory } from '../../src/point/memory.js';
import { planThermal, runThermal } from '../../src/thermal/thermal.js';
import { describeThermal, thermalCsv } from '../../src/thermal/describe.js';
import { collect, memoryLimit } from './shared.js';

interface ThermalFlags {
  set: string[];
  json?: boolean;
  csv?: boolean;
  maxMemory?: string;
}

export function registerThermalCommands(program: Command): void {
  program
    .command('thermal')
    .description(
      'thermal equilibrium (energy, specific heat, entropy, free energy, observables) at the temperatures of [thermal]',
    )
    .argument('<spec>', 'model spec with a [thermal] section, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--json', 'print the result as one JSON object on stdout')
    .option('--csv', 'print one CSV row per temperature on stdout')
    .option('--max-memory <size>', 'refuse problems whose estimate exceeds this (default: 60% of RAM)')
    .action((specPath: string, opts: ThermalFlags) => {
      if (opts.json && opts.csv) throw new InputError('--json and --csv: choose one');
      const { spec } = loadSpec(specPath, opts.set);
      const limit = memoryLimit(opts);
      const plan = planThermal(spec, { maxMemory: limit });
      assertWithinMemory(plan.memory, limit, 'this thermal run', '--max-memory');
      const result = runThermal(spec, plan);
      if (opts.json) process.stdout.write(JSON.stringify(result) + '\n');
      else if (opts.csv) process.stdout.write(thermalCsv(result));
      else console.log(describeThermal(result));
    });
}
