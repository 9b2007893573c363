// Disorder benchmark (part of `npm run bench`, issue 20): a disorder ensemble of an 8-site chain of
// 3 levels (6561 states, the scan benchmark's size) scanned over 20 values of V, 200 realizations,
// against the clean line of the same spec (with its symmetry sectors, and on the full space as the
// disordered points are solved): wall time, and the cost of a realization's point beside a clean
// point. Each run writes a real run folder in a temporary directory, as `rungchain scan` does.
//
// usage: node dist/bench/disorderBench.js [--realizations 200] [--points 20] [--sites 8] [--levels 3] [--workers 2]

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { readRun } from '../src/runs/runFiles.js';
import { runScan } from '../src/scan/runner.js';
import { fmt, table } from '../src/format/tables.js';

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  return at >= 0 ? Number(process.argv[at + 1]) : fallback;
}

const realizations = option('realizations', 200);
const points = option('points', 20);
const sites = option('sites', 8);
const levels = option('levels', 3);
const workers = option('workers', 2);

const spec = (extra: string, symmetries: string) => `
[chain]
sites = ${sites}
boundary = "periodic"
[levels]
count = ${levels}
tunnelling = 1.0
detuning = 0.05
[exchange]
strength = 1.0
weights = "rotor"
[solve]
states = 2
tolerance = 1e-9
symmetries = "${symmetries}"
[[scan.axis]]
key = "exchange.strength"
from = 0.5
to = 4.0
steps = ${points}
${extra}`;

const DISORDER = `
[disorder]
realizations = ${realizations}
seed = 1
tunnelling = { relative = 0.02 }
detuning = { absolute = 0.05 }
exchange = { relative = 0.02 }
`;

interface Row {
  name: string;
  points: number;
  wall: number;
  perPoint: number;
  products: number;
  dimension: number;
}

async function measure(dir: string, name: string, text: string): Promise<Row> {
  const specPath = path.join(dir, `${name}.toml`);
  writeFileSync(specPath, text);
  const out = path.join(dir, name);
  const started = performance.now();
  const outcome = await runScan({ specPath, out, workers, warmStart: true });
  const wall = (performance.now() - started) / 1000;
  const records = readRun(out).records as unknown as {
    status: string;
    error?: string;
    iterations: number;
    result?: { basis: { dimension: number } };
  }[];
  if (outcome.failed > 0) throw new Error(`${name}: ${records.find((r) => r.status === 'failed')?.error}`);
  const products = records.reduce((s, r) => s + r.iterations, 0) / records.length;
  return {
    name,
    points: records.length,
    wall,
    perPoint: wall / records.length,
    products,
    dimension: Math.max(...records.map((r) => r.result?.basis.dimension ?? 0)),
  };
}

const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-disorder-bench-'));
try {
  const rows: Row[] = [];
  rows.push(await measure(dir, 'clean-sectors', spec('', 'auto')));
  rows.push(await measure(dir, 'clean-full', spec('', 'none')));
  rows.push(await measure(dir, 'disorder', spec(DISORDER, 'auto')));
  const clean = rows[1];
  console.log(
    `disorder ensemble: ${realizations} realizations of a ${sites}x${levels} periodic chain, ${points} values of V, ${workers} workers`,
  );
  console.log(
    table(
      ['run', 'points', 'wall s', 'per point s', 'vs clean full', 'products/point', 'largest dim'],
      rows.map((r) => [
        r.name,
        String(r.points),
        fmt(r.wall, 4),
        fmt(r.perPoint, 3),
        fmt(r.perPoint / clean.perPoint, 3),
        fmt(r.products, 4),
        String(r.dimension),
      ]),
    ),
  );
  const d = rows[2];
  console.log(
    `one realization (a line of ${points} points): ${fmt(d.perPoint * points, 3)} s of wall time with ${workers} workers; the clean line: ${fmt(clean.wall, 3)} s on the full space, ${fmt(rows[0].wall, 3)} s in sectors`,
  );
} finally {
  rmSync(dir, { recursive: true, force: true });
}
