// The demo's 2D scenario: an invented molecule ("Y-31", made up) in a 3x3 open square array of
// tweezers, the quantization axis tilted from the normal of the array towards the x bonds. The
// dipolar exchange along x follows 1 - 3 sin^2(tilt): it vanishes at the magic angle and comes back
// with the other sign, twice as strong when the field lies along x, while the y bonds stay at V.
// Solved for real as a scan (the same runScan and run folder as `rungchain scan`), then read back.

import path from 'node:path';
import { expandScan } from '../scan/plan.js';
import { runScan } from '../scan/runner.js';
import { loadScanRun } from '../scan/scanRun.js';
import { defaultRunDir } from '../runs/folders.js';
import { makeFolderFor, writeFileAtomic } from '../runs/runFiles.js';
import { parseSpecText, validateSpec } from '../spec/spec.js';
import { buildModel } from '../model/model.js';
import { fmt, fmtNoise, shellCommand, table } from '../format/tables.js';
import type { ScanRecord } from '../scan/record.js';
import { renderReport } from '../output/report/report.js';
import { reportInputFromRun } from '../output/report/reportInputFromRun.js';

/** Fields [1, 0, c] in the xz plane; [1, 0, sqrt 2] is the magic tilt (sin^2 = 1/3) for the x bonds. */
export const ARRAY_DEMO_FIELDS: readonly (readonly number[])[] = [
  [0, 0, 1],
  [1, 0, 3],
  [1, 0, 2],
  [1, 0, Math.SQRT2],
  [1, 0, 1],
  [2, 0, 1],
  [1, 0, 0],
];

export const ARRAY_DEMO_LEVELS: readonly number[] = [2, 3];

/**
 * The scenario as a spec file; the demo writes it to runs/demo-array.toml and scans it, and the
 * repository keeps the same text as examples/tilted-array.toml (tests/demo/array.test.ts compares them).
 */
export const ARRAY_DEMO_SPEC_TOML = `# Invented molecule Y-31 in a 3x3 open square array of tweezers, the field tilted from the normal
# towards the x bonds: the exchange along x goes as 1 - 3 sin^2(tilt) and vanishes at the magic angle.
# Written by \`rungchain demo\` (runs/demo-array.toml); scan it with \`rungchain scan SPEC\`.

[lattice]
shape = "square"
size = [3, 3]
field = [0, 0, 1]            # scanned below

[levels]
count = 3                    # scanned below
tunnelling = 1.0             # microwave tunnelling J, the energy unit

[exchange]
strength = 3.0               # V/J, at distance 1 perpendicular to the field
range = "dipolar"            # every pair, with its own angle
weights = "rotor"

[solve]
states = 2

[[scan.axis]]
key = "levels.count"
values = [${ARRAY_DEMO_LEVELS.join(', ')}]

[[scan.axis]]
key = "lattice.field"        # tilts 0, 18.4, 26.6, 35.3 (magic for x), 45, 63.4 and 90 degrees
values = [${ARRAY_DEMO_FIELDS.map((f) => `[${f.join(', ')}]`).join(', ')}]
`;

/** Tilt of a field in the xz plane from the normal z, in degrees. */
export function tiltDegrees(field: readonly number[]): number {
  return (Math.atan2(field[0], field[2]) * 180) / Math.PI;
}

/** Sites x + 3y of the 3x3 array: the six bonds along x and the six along y. */
const X_BONDS = [0, 1, 3, 4, 6, 7].map((i) => [i, i + 1] as const);
const Y_BONDS = [0, 1, 2, 3, 4, 5].map((i) => [i, i + 3] as const);

/** The model's exchange of sites i and j over V, at a field tilted by `tilt` radians (0 when the pair is dropped). */
function couplingOverV(raw: Record<string, unknown>, tilt: number, i: number, j: number): number {
  const tree = structuredClone(raw) as Record<string, Record<string, unknown>>;
  tree.lattice.field = [Math.sin(tilt), 0, Math.cos(tilt)];
  delete tree.scan;
  const model = buildModel(validateSpec(tree));
  const pairs = model.exchangePairs;
  for (let p = 0; p < pairs.count; p++)
    if (pairs.i[p] === i && pairs.j[p] === j) return pairs.value[p] / Number(tree.exchange.strength);
  return 0;
}

/**
 * The tilt (radians) where the model's exchange along x changes sign, found by bisection on the
 * couplings the solver uses (not from the formula), between the normal and the plane.
 */
export function magicTilt(raw: Record<string, unknown>): number {
  let lo = 0;
  let hi = Math.PI / 2;
  // V_x > 0 at the normal, < 0 along x: keep the sign change bracketed.
  for (let k = 0; k < 60; k++) {
    const mid = (lo + hi) / 2;
    if (couplingOverV(raw, mid, 0, 1) > 0) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/** Mean connected level correlation over bonds. */
function meanCorrelation(record: ScanRecord, bonds: readonly (readonly [number, number])[]): number {
  const c = record.result?.observables.level_correlation;
  if (!c) throw new Error(`demo point ${record.index} has no level correlation`);
  return bonds.reduce((s, [i, j]) => s + c[i][j], 0) / bonds.length;
}

export interface ArrayDemoPlan {
  /** The spec file the demo writes, runs/demo-array.toml under the root. */
  specFile: string;
  /** The scan's run folder, named as `rungchain scan` names it (so the same scan resumes it). */
  runDir: string;
  /** Its HTML report, as `rungchain report` writes it. */
  reportFile: string;
  raw: Record<string, unknown>;
}

/** Where the scenario goes under `root` (the current folder): nothing is written yet. */
export function planArrayDemo(root = '.'): ArrayDemoPlan {
  const specFile = path.join(root, 'runs', 'demo-array.toml');
  const raw = parseSpecText(ARRAY_DEMO_SPEC_TOML, 'toml', specFile);
  const plan = expandScan(raw, validateSpec(structuredClone(raw)));
  const runDir = path.join(root, defaultRunDir(specFile, plan.identity));
  return { specFile, runDir, reportFile: path.join(runDir, 'report.html'), raw };
}

/**
 * Writes the scenario's spec, scans it into its run folder (resumed, so a second demo solves
 * nothing again), writes the folder's report, prints the correlations along x and y against the
 * tilt and where the exchange along x vanishes. `program`: how the user starts rungchain.
 */
export async function runArrayDemo(
  print: (line: string) => void,
  program = 'rungchain',
  where: ArrayDemoPlan = planArrayDemo(),
): Promise<ArrayDemoPlan> {
  const { specFile, runDir, reportFile, raw } = where;
  makeFolderFor(specFile, 'the demo spec');
  writeFileAtomic(specFile, ARRAY_DEMO_SPEC_TOML);
  print('A 2D array: invented molecule Y-31 in a 3x3 open square of tweezers, tunnelling J = 1, dipolar');
  print('exchange V = 3 between every pair (rigid-rotor weights), the field tilted from the normal of');
  print('the array towards its x bonds. Each pair couples as V (1 - 3 cos^2 theta) / r^3, theta between');
  print('the pair and the field: the y bonds keep V, the x bonds go as V (1 - 3 sin^2 tilt).');
  print(`Solved as a scan over the tilt and the number of levels N into ${path.resolve(runDir)}`);
  const outcome = await runScan({ specPath: specFile, out: runDir, workers: 2 });
  const run = loadScanRun(outcome.dir);
  if (run.counts.done !== run.counts.total)
    throw new Error(`the demo scan finished ${run.counts.done} of ${run.counts.total} points`);
  writeFileAtomic(reportFile, renderReport(reportInputFromRun(run)));
  const byPoint = new Map<string, ScanRecord>();
  for (const row of run.rows) byPoint.set(JSON.stringify(row.params), row.record!);
  const rows = ARRAY_DEMO_FIELDS.map((field) => {
    const tilt = tiltDegrees(field);
    const t = (tilt * Math.PI) / 180;
    // Rounding leaves ~1e-16 of the x coupling at the magic field [1, 0, sqrt 2]: print it as the 0 it is.
    const cells = [
      fmt(tilt, 3),
      fmtNoise(couplingOverV(raw, t, 0, 1), 1, 3),
      fmtNoise(couplingOverV(raw, t, 0, 3), 1, 3),
    ];
    for (const N of ARRAY_DEMO_LEVELS) {
      const record = byPoint.get(JSON.stringify({ 'levels.count': N, 'lattice.field': field }))!;
      cells.push(fmt(meanCorrelation(record, X_BONDS), 3), fmt(meanCorrelation(record, Y_BONDS), 3));
      if (N === 3) cells.push(fmt(record.result!.gap, 4));
    }
    return cells;
  });
  print('');
  print(table(['tilt [deg]', 'Vx/V', 'Vy/V', 'corr x N=2', 'corr y N=2', 'corr x N=3', 'corr y N=3', 'gap N=3'], rows));
  print('corr x, corr y: level_correlation <n_i n_j> - <n_i><n_j> averaged over the bonds along x, along y.');
  const tilt = (magicTilt(raw) * 180) / Math.PI;
  print(
    `The exchange along x vanishes at a tilt of ${tilt.toFixed(4)} deg: the field then makes ${(90 - tilt).toFixed(4)} deg with the x bonds,`,
  );
  print('the magic angle arccos(1/sqrt 3). There the x neighbours hardly correlate: the array is three');
  print('columns linked only by the weaker diagonal pairs. Beyond it the x bonds, now of the other sign,');
  print('take over from the y bonds, and at 90 deg the correlation along x is the stronger one.');
  print(`Report of the array scan: ${path.resolve(reportFile)}`);
  print(
    `Every point: \`${shellCommand(program, ['summary', runDir])}\`; edit the spec and scan it again: \`${shellCommand(program, ['scan', specFile])}\`.`,
  );
  return where;
}
