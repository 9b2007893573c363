// Scan benchmark (part of `npm run bench`): a line of points of a few thousand states each,
//   1. wall time with 1 worker vs 2 workers, and their ratio (goal: >= 1.7 on 2 cores), runs
//      alternated and repeated (--repeats), as the one worker lands on either core;
//   2. Lanczos matrix-vector products along the line with warm starts vs cold starts, and ratio;
//   3. each core's speed on the same loop, since unequal cores cap any speed-up (bench/cores.ts).
// Each run writes a real run folder (in a temporary directory), as `rungchain scan` does.
//
// With no --sites, the line runs at 8 sites (6561 states, the goal's size) and again at 9 (19683),
// to show how the two-worker ratio grows with the work per point.
//
// usage: node dist/bench/scanBench.js [--points 40] [--sites 8] [--levels 3] [--workers 2] [--repeats 3]

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { readRun } from '../src/runs/runFiles.js';
import { runScan, type ScanOutcome } from '../src/scan/runner.js';
import { fmt, table } from '../src/format/tables.js';
import { coreSpeeds, describeCores } from './cores.js';

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  return at >= 0 ? Number(process.argv[at + 1]) : fallback;
}

const points = option('points', 40);
const siteCounts = process.argv.includes('--sites') ? [option('sites', 8)] : [8, 9];
const levels = option('levels', 3);
const maxWorkers = option('workers', 2);
const repeats = option('repeats', 3);

const specFor = (sites: number) => `
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
# The full space, so the figures are those of plain Lanczos (sector solves split each point up).
symmetries = "none"
[[scan.axis]]
key = "exchange.strength"
from = 0.5
to = 4.0
steps = ${points}
`;

interface Figures {
  outcome: ScanOutcome;
  /** Each point's solve time, seconds, in index order. */
  pointSeconds: number[];
  products: number;
  warm: number;
  method: string;
  dimension: number;
}

/** The fields of a scan record this bench reads. */
interface BenchRecord {
  index: number;
  status: string;
  error?: string;
  seconds: number;
  iterations: number;
  warm_start?: boolean;
  result?: { solver?: { method?: string }; basis?: { dimension?: number } };
}

async function measure(dir: string, name: string, workers: number, warmStart: boolean): Promise<Figures> {
  const out = path.join(dir, name);
  const outcome = await runScan({ specPath: path.join(dir, 'line.toml'), out, workers, warmStart });
  const records = readRun(out).records as unknown as BenchRecord[];
  if (outcome.failed > 0)
    throw new Error(`${name}: ${outcome.failed} points failed: ${records.find((r) => r.status === 'failed')?.error}`);
  return {
    outcome,
    pointSeconds: [...records].sort((a, b) => a.index - b.index).map((r) => Number(r.seconds)),
    products: records.reduce((s, r) => s + r.iterations, 0),
    warm: records.filter((r) => r.warm_start).length,
    method: String(records[0]?.result?.solver?.method),
    dimension: Number(records[0]?.result?.basis?.dimension),
  };
}

const cores = coreSpeeds();

async function main(): Promise<void> {
  console.log(describeCores(cores));
  for (const sites of siteCounts) await benchLine(sites);
}

/**
 * Amdahl's bound from a one-worker run: its wall time is steady solving (the points' own times,
 * the first, cold one counted as a typical point) plus a part no second worker shortens (pool and
 * worker start-up, each worker's first solve while its code is compiled, records written). Returns
 * that part in seconds and the largest speed-up it leaves `cores` equal cores, or cores of speeds
 * adding up to `ceiling` times the fastest.
 */
function amdahlCeiling(
  run: Figures,
  ceiling: number,
): { fixed: number; steady: number; equal: number; measured: number } {
  const times = run.pointSeconds;
  const typical = median(times);
  const steady = times.reduce((s, t) => s + t, 0) - Math.max(0, times[0] - typical);
  const fixed = Math.max(0, run.outcome.seconds - steady);
  const bound = (speedUp: number) => (fixed + steady) / (fixed + steady / speedUp);
  return { fixed, steady, equal: bound(maxWorkers), measured: bound(Math.min(maxWorkers, ceiling)) };
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

async function benchLine(sites: number): Promise<void> {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-scan-bench-'));
  try {
    writeFileSync(path.join(dir, 'line.toml'), specFor(sites));
    const ones: Figures[] = [];
    const twos: Figures[] = [];
    for (let r = 0; r < repeats; r++) {
      ones.push(await measure(dir, `one-worker-${r}`, 1, true));
      twos.push(await measure(dir, `${maxWorkers}-workers-${r}`, maxWorkers, true));
    }
    const cold = await measure(dir, 'one-worker-cold', 1, false);
    const [one, two] = [ones[0], twos[0]];
    const seconds = (runs: Figures[]) => runs.map((f) => f.outcome.seconds);
    console.log('');
    console.log(
      `scan of ${points} points along exchange.strength 0.5..4, pinned ${sites} sites x ${levels} levels, periodic ` +
        `(dimension ${one.dimension}, ${one.method}, no symmetry sectors), 2 lowest states, tolerance 1e-9; ${os.availableParallelism()} cores`,
    );
    const row = (name: string, workers: number, runs: Figures[]): string[] => [
      name,
      String(workers),
      String(runs[0].warm),
      seconds(runs)
        .map((t) => fmt(t, 3))
        .join(', '),
      fmt(median(seconds(runs)), 3),
      String(runs[0].products),
      fmt(runs[0].products / points, 4),
    ];
    console.log(
      table(
        ['run', 'workers', 'warm starts', 'wall s (each run)', 'median s', 'products (first run)', 'products/point'],
        [
          row('warm, 1 worker', 1, ones),
          row(`warm, ${maxWorkers} workers`, maxWorkers, twos),
          row('cold, 1 worker', 1, [cold]),
        ],
      ),
    );
    console.log(
      `speed-up ${maxWorkers} workers / 1 worker (median wall times): ${fmt(median(seconds(ones)) / median(seconds(twos)), 3)}; ` +
        `fastest 1-worker run / median ${maxWorkers}-worker run: ${fmt(Math.min(...seconds(ones)) / median(seconds(twos)), 3)}   (goal >= 1.7 with 2 workers on 2 cores)`,
    );
    if (ones.some((f) => f.products !== one.products) || twos.some((f) => f.products !== two.products)) {
      console.log(
        'note: runs with the same workers differ in products (work stealing cut a line elsewhere); the table shows the first run',
      );
    }
    console.log(`products cold / warm along the line (1 worker): ${fmt(cold.products / one.products, 3)}`);
    const fastest = ones.reduce((a, b) => (a.outcome.seconds <= b.outcome.seconds ? a : b));
    const amdahl = amdahlCeiling(fastest, cores.ceiling ?? maxWorkers);
    console.log(
      `Amdahl ceiling from the fastest 1-worker run: ${fmt(amdahl.fixed, 3)} s of its ${fmt(fastest.outcome.seconds, 3)} s is start-up and the first ` +
        `(cold) solve's extra; ${maxWorkers} workers can be at most ${fmt(amdahl.equal, 3)} times as fast with equal cores, ` +
        `${fmt(amdahl.measured, 3)} with the core speeds measured at the start`,
    );
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

void main();
