// A 3x3 open square array of 4-level molecules with a tilted field and dipolar exchange (issue 19),
// side by side with the open chain of 9 sites with the same terms: the same basis (4^9 states), more
// coupled pairs with more distinct values. Each case runs in a fresh process so its peak memory is
// its own; prints dimension, coupled pairs, solve time, products, peak memory beside the estimate.
//
// usage: node dist/bench/latticeBench.js

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { buildModel } from '../src/model/model.js';
import { solvePoint } from '../src/point/solvePoint.js';
import { formatBytes } from '../src/format/bytes.js';
import { validateSpec, type Spec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';

const CASES: Record<string, Record<string, unknown>> = {
  'square 3x3, field tilted': { lattice: { shape: 'square', size: [3, 3], field: [1, 0.5, 1] } },
  'chain of 9': { chain: { sites: 9 } },
};

function specFor(name: string): Spec {
  return validateSpec({
    ...CASES[name],
    levels: { count: 4, tunnelling: 1, detuning: [0, 0.1, 0.2, 0.3] },
    exchange: { strength: 1.5, range: 'dipolar', weights: 'rotor' },
    ising: { strength: 0.4, moments: [0.5, -0.2, 0.1, 0] },
    solve: { states: 4, tolerance: 1e-9 },
  });
}

interface Figures {
  dimension: number;
  pairs: number;
  solve_s: number;
  iterations: number;
  estimate_bytes: number;
  peak_rss_bytes: number;
  e0: number;
}

function measure(name: string): Figures {
  const spec = specFor(name);
  const t0 = performance.now();
  const { record } = solvePoint(spec);
  const solve = (performance.now() - t0) / 1e3;
  return {
    dimension: record.basis.dimension,
    pairs: buildModel(spec).exchangePairs.count,
    solve_s: solve,
    iterations: record.solver.iterations,
    estimate_bytes: record.solver.memory_estimate_bytes,
    peak_rss_bytes: process.resourceUsage().maxRSS * 1024,
    e0: record.energies[0],
  };
}

const self = fileURLToPath(import.meta.url);
const child = process.argv.indexOf('--case');
if (child >= 0) {
  process.stdout.write(JSON.stringify(measure(process.argv[child + 1])) + '\n');
} else {
  const rows: string[][] = [];
  for (const name of Object.keys(CASES)) {
    const run = spawnSync(process.execPath, [self, '--case', name], { encoding: 'utf8' });
    if (run.status !== 0) throw new Error(`${name}: ${run.stderr}`);
    const f = JSON.parse(run.stdout.trim()) as Figures;
    rows.push([
      name,
      String(f.dimension),
      String(f.pairs),
      fmt(f.solve_s, 3),
      String(f.iterations),
      formatBytes(f.estimate_bytes),
      formatBytes(f.peak_rss_bytes),
      fmt(f.e0, 10),
    ]);
  }
  console.log('Lattice against chain: 4 levels, dipolar exchange (rotor weights), diagonal term, 4 states');
  console.log(table(['case', 'dimension', 'pairs', 'solve s', 'products', 'estimate', 'peak RSS', 'E0'], rows));
}
