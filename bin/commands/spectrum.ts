// `spectrum`: the linear response of one model spec's ground state to the probe of its [spectrum] section.
import type { Command } from 'commander';
import { loadSpec } from '../../src/spec/spec.js';
import { InputError } from '../../src/errors/errors.js';
import { computeSpectrum, spectrumSection } from '../../src/spectrum/spectrum.js';
import { spectrumCsv, spectrumText } from '../../src/spectrum/text.js';
import { collect, memoryLimit } from './shared.js';

export function registerSpectrumCommands(program: Command): void {
  program
    .command('spectrum')
    .description(
      'linear-response spectrum of the ground state to the probe of the [spectrum] section (Lanczos continued fraction)',
    )
    .argument('<spec>', 'model spec with a [spectrum] section, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--json', 'print the result as one JSON object on stdout')
    .option('--csv [what]', 'print tidy CSV: "curve" (frequency, intensity; the default) or "lines" (position, weight)')
    .option('--max-memory <size>', 'refuse problems whose estimate exceeds this (default: 60% of RAM)')
    .action((specPath: string, opts: SpectrumFlags) => {
      const csvWhat = opts.csv === undefined ? null : opts.csv === true ? 'curve' : opts.csv;
      if (csvWhat !== null && csvWhat !== 'curve' && csvWhat !== 'lines')
        throw new InputError(`--csv: expected "curve" or "lines", got "${csvWhat}"`);
      if (opts.json && csvWhat !== null) throw new InputError('--json and --csv: choose one');
      const { spec } = loadSpec(specPath, opts.set);
      spectrumSection(spec);
      const { spectrum } = computeSpectrum(spec, { maxMemory: memoryLimit(opts), memoryLimitName: '--max-memory' });
      if (opts.json) process.stdout.write(JSON.stringify(spectrum) + '\n');
      else if (csvWhat !== null) process.stdout.write(spectrumCsv(spectrum, csvWhat));
      else console.log(spectrumText(spectrum));
      const cf = spectrum.continued_fraction;
      if (!cf.converged)
        process.stderr.write(
          `rungchain: warning: the curve still changed by ${cf.check.toExponential(2)} of its peak at spectrum.max_levels = ${cf.levels} (tolerance ${cf.tolerance})\n`,
        );
      if (!spectrum.ground_copies_complete)
        process.stderr.write(
          `rungchain: warning: the ground level may have copies that were not found; the spectrum averages the ${spectrum.ground_copies} found\n`,
        );
    });
}

interface SpectrumFlags {
  set: string[];
  json?: boolean;
  csv?: string | true;
  maxMemory?: string;
}
