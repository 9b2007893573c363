// `check`, `solve` and `demo`: one model spec at a time.
import type { Command } from 'commander';
import { loadSpec } from '../../src/spec/spec.js';
import { planPoint, solvePoint, type PointPlan } from '../../src/point/solvePoint.js';
import { assertWritableFile, plannedStatesFileBytes, writeStatesFile } from '../../src/point/stateFile.js';
import { buildModel } from '../../src/model/model.js';
import { describeGeometry } from '../../src/model/geometryText.js';
import { InputError } from '../../src/errors/errors.js';
import { formatBytes } from '../../src/format/bytes.js';
import type { SectorProgress } from '../../src/symmetry/sectorSolve.js';
import { momentumText, pointGroupText, type SectorLabel } from '../../src/symmetry/group.js';
import { describePlan, describeRecord, siteArrangement } from '../../src/point/describe.js';
import { runDemo } from '../../src/demo/demo.js';
import { collect, memoryLimit } from './shared.js';
import { invocation } from '../invocation.js';
import { describeLabEnergies, labEnergies, labUnits } from '../../src/spec/units.js';
import { describeScan, describeWork } from '../../src/scan/plan.js';
import { defaultWorkerCount } from '../../src/scan/runner.js';
import { secondsMinutesHours } from '../../src/format/durations.js';
import { spectrumMemory } from '../../src/spectrum/spectrum.js';
import { describeSpectrumMemory } from '../../src/spectrum/text.js';
import { planThermal } from '../../src/thermal/thermal.js';
import { describeThermalPlan } from '../../src/thermal/describe.js';

export function registerSolveCommands(program: Command): void {
  program
    .command('check')
    .description('size a model spec: basis dimension, operator storage, memory estimate (allocates nothing large)')
    .argument('<spec>', 'model spec, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--max-memory <size>', 'memory limit to check against, e.g. 8GB')
    .option('--save-states <file>', 'also say how large the states file of `solve --save-states` will be')
    .option('--save-states-all', 'size it for every solved state, not only the ground level')
    .action((specPath: string, opts: CheckFlags) => {
      const { raw, spec } = loadSpec(specPath, opts.set);
      const limit = memoryLimit(opts);
      if (spec.extra.scan) {
        console.log(describeScan(raw, spec, limit, defaultWorkerCount()));
        return;
      }
      // Sized as the solve that saves them runs: states kept on the full space count.
      const keepStates = opts.saveStates || opts.saveStatesAll ? (opts.saveStatesAll ? 'all' : 'ground') : undefined;
      const plan = planPoint(spec, { maxMemory: limit, groundStates: false, keepStates });
      console.log(describePlan(plan, limit));
      console.log(describeWork(spec, plan).join('\n'));
      // Where the molecules sit and what couples them, for a spec that describes its sites with [lattice].
      if (spec.extra.lattice) console.log(describeGeometry(plan.model).join('\n'));
      if (plan.memory.totalBytes > limit)
        console.log('solve would refuse this problem: the estimate exceeds the limit');
      // With [thermal]: the method `thermal` will use, its memory and time.
      if (spec.extra.thermal) console.log(describeThermalPlan(planThermal(spec, { maxMemory: limit })));
      if (opts.saveStates || opts.saveStatesAll) console.log(describeStatesFile(plan, spec.solve.states, opts));
      // With [spectrum], what the continued fraction adds after the ground solve.
      if (spec.extra.spectrum) console.log(describeSpectrumMemory(spectrumMemory(spec, plan), limit));
    });

  program
    .command('solve')
    .description('ground state, low spectrum and observables of one model spec')
    .argument('<spec>', 'model spec, .toml or .json')
    .option('--set <key=value>', 'override a spec key (repeatable)', collect, [])
    .option('--json', 'print the result as one JSON object on stdout')
    .option('--max-memory <size>', 'refuse problems whose estimate exceeds this (default: 60% of RAM)')
    .option('--quiet', 'no progress line on the terminal')
    .option(
      '--save-states <file>',
      "write the ground level's states to this .npy file (and what they are to <file>.json)",
    )
    .option('--save-states-all', 'with --save-states: every solved state, not only the ground level')
    .action((specPath: string, opts: SolveFlags) => {
      const { spec } = loadSpec(specPath, opts.set);
      if (opts.saveStatesAll && !opts.saveStates)
        throw new InputError('--save-states-all needs --save-states FILE to name the file');
      if (opts.saveStates) assertWritableFile(opts.saveStates);
      const progress = opts.quiet || !process.stderr.isTTY ? undefined : solveProgress();
      const { record, kept } = solvePoint(spec, {
        maxMemory: memoryLimit(opts),
        memoryLimitName: '--max-memory',
        onProgress: progress ? (info) => progress.update(info) : undefined,
        groundStates: false,
        keepStates: opts.saveStates ? (opts.saveStatesAll ? 'all' : 'ground') : undefined,
        keepStatesName: '--save-states',
      });
      progress?.done();
      if (opts.saveStates && kept) writeStatesFile(opts.saveStates, kept, record, buildModel(spec));
      // With [units], energies also in Hz (a `units` block in JSON, lines under the table).
      const units = labUnits(spec);
      if (opts.json)
        process.stdout.write(
          JSON.stringify(units ? { ...record, units: labEnergies(units, record.energies, record.gap) } : record) + '\n',
        );
      else {
        console.log(describeRecord(record, siteArrangement(spec)));
        if (units) console.log('\n' + describeLabEnergies(units, record.energies, record.gap).join('\n'));
      }
      if (!record.solver.converged) {
        process.stderr.write(
          `rungchain: warning: not converged to tolerance ${spec.solve.tolerance}; residuals are in the output\n`,
        );
      }
    });

  program
    .command('demo')
    .description('solve a built-in invented scenario and print what it shows')
    .action(async () => {
      await runDemo((line) => console.log(line), invocation());
    });
}

interface CheckFlags {
  set: string[];
  maxMemory?: string;
  saveStates?: string;
  saveStatesAll?: boolean;
}

interface SolveFlags {
  set: string[];
  json?: boolean;
  maxMemory?: string;
  quiet?: boolean;
  saveStates?: string;
  saveStatesAll?: boolean;
}

/** The states file's size: rows x dimension x 8 (float64) or 16 (complex128) bytes, plus the header. */
function describeStatesFile(plan: PointPlan, states: number, opts: { saveStatesAll?: boolean }): string {
  const which = opts.saveStatesAll ? 'all' : 'ground';
  const rows = which === 'all' ? Math.min(states, plan.dimension) : 1;
  const bytes = plannedStatesFileBytes(plan, which, rows);
  const perState = plannedStatesFileBytes(plan, which, rows + 1) - bytes;
  const what = which === 'all' ? `${rows} solved states` : 'the ground state';
  // Momentum states of a real Hamiltonian are sized as complex; those that are real are saved at half the size.
  const bound = which === 'all' && !plan.model.isComplex && plan.used?.translation ? 'at most ' : '';
  return (
    `states file (--save-states${which === 'all' ? ' --save-states-all' : ''}): ${bound}${formatBytes(bytes)} (${bytes} bytes) ` +
    `for ${what}, ${formatBytes(perState)} more for each further copy of the ground level`
  );
}

/**
 * A one-line progress report on a terminal's stderr (stdout stays the result alone): products so
 * far, the worst residual against the tolerance, elapsed time; in a sector-by-sector solve also
 * which sector (each sector's residual starts afresh) and a rough time left from the share of the
 * space in the sectors before it. Redrawn at most twice a second.
 */
function solveProgress() {
  const started = Date.now();
  let last = 0;
  let shown = false;
  return {
    update(info: { matvecs: number; restarts: number; worstResidual: number; sector?: SectorProgress }): void {
      const now = Date.now();
      if (now - last < 500) return;
      last = now;
      shown = true;
      const elapsed = (now - started) / 1000;
      const where = info.sector
        ? `sector ${info.sector.index} of ${info.sector.count} (${sectorName(info.sector.label)}, ${info.sector.dimension} states), `
        : '';
      const left =
        info.sector && info.sector.spaceBefore > 0
          ? `, about ${secondsMinutesHours((elapsed * (1 - info.sector.spaceBefore)) / info.sector.spaceBefore)} left`
          : '';
      const line = `solving: ${where}${info.matvecs} products, residual ${info.worstResidual.toExponential(1)}, ${secondsMinutesHours(elapsed)}${left}`;
      process.stderr.write(`\r${line.padEnd(100)}`);
    },
    done(): void {
      if (shown) process.stderr.write(`\r${' '.repeat(100)}\r`);
    },
  };
}

/** A sector's quantum numbers as a short label: k=2 P+ F- q=3 (only the symmetries in use). */
export function sectorName(l: SectorLabel): string {
  const parts: string[] = [];
  if (l.momentum !== null) parts.push(`k=${momentumText(l.momentum)}`);
  if (l.parity !== null) parts.push(`P${l.parity > 0 ? '+' : '-'}`);
  if (l.level_flip !== null) parts.push(`F${l.level_flip > 0 ? '+' : '-'}`);
  if (l.point_group) parts.push(`G ${pointGroupText(l.point_group)}`);
  if (l.charge !== null) parts.push(`q=${l.charge}`);
  return parts.join(' ') || 'whole space';
}
