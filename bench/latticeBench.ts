// A 3x3 open square array of 4-level molecules with a tilted field and dipolar exchange (issue 19),
// side by side with the open chain of 9 sites with the same terms: the same basis (4^9 states), more
// coupled pairs with more distinct values. Each case runs in a fresh process so its peak memory is
// its own; prints dimension, coupled pairs, solve time, products, peak memory beside the estimate.
//
// Then the 4x4 periodic square lattice through its symmetry sectors: 3-level molecules (3^16 = 43
// million states; dipolar exchange with rotor weights and the diagonal term, no microwave
// tunnelling, so the total level is conserved) through translations, point group and charge, and
// the 4x4 Heisenberg antiferromagnet (2 levels) with translations alone and with the point group.
// Printed: time, products, sectors solved and screened, the largest sector, peak memory and estimate.
//
// usage: node dist/bench/latticeBench.js

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { buildModel } from '../src/model/model.js';
import { solvePoint } from '../src/point/solvePoint.js';
import { formatBytes } from '../src/format/bytes.js';
import { validateSpec, type Spec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';

// H = sum_<ij> S_i . S_j in the tests' mapping: exchange 1/2, diagonal term 1 with moments -1/2, +1/2.
const HEISENBERG = {
  lattice: { shape: 'square', size: [4, 4], boundary: 'periodic' },
  levels: { count: 2, tunnelling: 0 },
  exchange: { strength: 0.5 },
  ising: { strength: 1, moments: [-0.5, 0.5] },
};

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

/** The 4x4 periodic lattices solved in sectors, each with its symmetry list. */
const SECTOR_CASES: Record<string, Record<string, unknown>> = {
  '4x4 3 levels, translation+point_group+charge': {
    lattice: { shape: 'square', size: [4, 4], boundary: 'periodic' },
    levels: { count: 3, tunnelling: 0, detuning: [0, 0.1, 0.2] },
    exchange: { strength: 1, range: 'dipolar', weights: 'rotor' },
    ising: { strength: 0.4, moments: [0.5, -0.2, 0.1], range: 'dipolar' },
    solve: { states: 1, symmetries: ['translation', 'point_group', 'charge'] },
  },
  '4x4 Heisenberg, translation+charge': {
    ...HEISENBERG,
    solve: { states: 1, symmetries: ['translation', 'charge'] },
  },
  '4x4 Heisenberg, translation+point_group+charge': {
    ...HEISENBERG,
    solve: { states: 1, symmetries: ['translation', 'point_group', 'charge'] },
  },
};

interface SectorFigures {
  dimension: number;
  solve_s: number;
  iterations: number;
  sectors: number;
  screened: number;
  largest: number;
  estimate_bytes: number;
  peak_rss_bytes: number;
  e0: number;
  label: string;
}

function measureSectors(name: string): SectorFigures {
  const spec = validateSpec(SECTOR_CASES[name]);
  const t0 = performance.now();
  const { record } = solvePoint(spec);
  const solve = (performance.now() - t0) / 1e3;
  const runs = record.solver.sector_runs ?? [];
  const l = record.sectors?.[0];
  return {
    dimension: record.basis.dimension,
    solve_s: solve,
    iterations: record.solver.iterations,
    sectors: runs.length,
    screened: runs.filter((r) => r.screened).length,
    largest: Math.max(0, ...runs.map((r) => r.dimension)),
    estimate_bytes: record.solver.memory_estimate_bytes,
    peak_rss_bytes: process.resourceUsage().maxRSS * 1024,
    e0: record.energies[0],
    label: l ? `k=(${String(l.momentum)}) q=${l.charge} ${JSON.stringify(l.point_group ?? null)}` : '',
  };
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
const sectorChild = process.argv.indexOf('--sectors');
if (child >= 0) {
  process.stdout.write(JSON.stringify(measure(process.argv[child + 1])) + '\n');
} else if (sectorChild >= 0) {
  process.stdout.write(JSON.stringify(measureSectors(process.argv[sectorChild + 1])) + '\n');
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
  const sectorRows: string[][] = [];
  for (const name of Object.keys(SECTOR_CASES)) {
    const run = spawnSync(process.execPath, [self, '--sectors', name], { encoding: 'utf8', maxBuffer: 1 << 24 });
    if (run.status !== 0) throw new Error(`${name}: ${run.stderr}`);
    const f = JSON.parse(run.stdout.trim()) as SectorFigures;
    sectorRows.push([
      name,
      String(f.dimension),
      fmt(f.solve_s, 3),
      String(f.iterations),
      `${f.sectors} (${f.screened} screened)`,
      String(f.largest),
      formatBytes(f.estimate_bytes),
      formatBytes(f.peak_rss_bytes),
      fmt(f.e0, 10),
      f.label,
    ]);
  }
  console.log('');
  console.log('4x4 periodic square lattice in symmetry sectors, ground state');
  console.log(
    table(
      ['case', 'dimension', 'solve s', 'products', 'sectors', 'largest', 'estimate', 'peak RSS', 'E0', 'ground sector'],
      sectorRows,
    ),
  );
}
