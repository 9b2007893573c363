// The built-in demo: an invented scenario, solved for real, printed as a short story.
// "Molecule X-47" is made up: a polar molecule whose four lowest rotational levels are dressed by
// microwaves in a six-site ring of optical tweezers, with exchange weighted like a rigid rotor.
// Then its quench (dynamics.ts) and a 2D array of another invented molecule (array.ts).

import { validateSpec } from '../spec/spec.js';
import { solvePoint } from '../point/solvePoint.js';
import { fmt, table } from '../format/tables.js';
import { observableValue } from '../analysis/transitions.js';
import { runDynamicsDemo } from './dynamics.js';
import { DEMO_REPORT_FILE, DEMO_TRACE_REPORT_FILE, writeDemoReport, writeDemoTraceReport } from './report.js';
import path from 'node:path';
import { DEMO_SPEC } from './spec.js';
import { planArrayDemo, runArrayDemo } from './array.js';

/** `program`: how the user starts rungchain from where they stand, for the commands the demo suggests. */
export async function runDemo(print: (line: string) => void, program = 'rungchain'): Promise<void> {
  print('rungchain demo: invented molecule X-47, six tweezers on a ring, microwave tunnelling J = 1');
  print('between its rotational levels, dipolar exchange V between neighbours (rigid-rotor weights).');
  print('As V/J grows the molecules bind into one string in the synthetic dimension: its width stays');
  print('small and stops growing with the number of levels N.');
  const array = planArrayDemo();
  print(
    `It writes two HTML reports under the current folder: ${path.resolve(DEMO_REPORT_FILE)} and ${path.resolve(DEMO_TRACE_REPORT_FILE)}`,
  );
  print(
    `and a 2D array's spec ${path.resolve(array.specFile)} with its run folder (and report) ${path.resolve(array.runDir)}`,
  );
  print('');
  const rows: string[][] = [];
  for (const V of [0.5, 1, 2, 3, 4, 6]) {
    const cells = [fmt(V, 3)];
    for (const N of [3, 4, 5]) {
      const raw = structuredClone(DEMO_SPEC);
      raw.exchange.strength = V;
      raw.levels.count = N;
      const { record } = solvePoint(validateSpec(raw), { groundStates: false });
      if (N === 4) cells.push(fmt(observableValue(record, 'E0/L'), 7), fmt(observableValue(record, 'gap'), 5));
      cells.push(fmt(observableValue(record, 'string_width'), 4));
    }
    rows.push(cells);
  }
  print(table(['V/J', 'width N=3', 'E0/L (N=4)', 'gap (N=4)', 'width N=4', 'width N=5'], rows));
  print('');
  print('');
  runDynamicsDemo(print);
  writeDemoTraceReport(print);
  print('');
  writeDemoReport(print);
  print('');
  await runArrayDemo(print, program, array);
  print('');
  print(
    `Solve your own: write a spec (see README) and run \`${program} solve SPEC\`; evolve one with \`${program} evolve SPEC\`.`,
  );
}
