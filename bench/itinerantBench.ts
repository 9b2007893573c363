// Itinerant particles near a million states: hard-core bosons, soft-core bosons and fermions on
// periodic chains with every term on. Each case runs in a fresh process so its peak memory is its
// own; prints dimension, stored entries, build time, product time and throughput, products used,
// end-to-end solve time and peak memory (build and solve each in a fresh process).
//
// usage: node dist/bench/itinerantBench.js [--small]     (--small: the same cases near 10^4 states)

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { buildBasis } from '../src/basis/basis.js';
import { buildModel } from '../src/model/model.js';
import { buildOperator } from '../src/operator/build.js';
import { solvePoint } from '../src/point/solvePoint.js';
import { formatBytes } from '../src/format/bytes.js';
import { VectorArena } from '../src/simd/arena.js';
import { validateSpec, type Spec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';

interface Case {
  name: string;
  sites: number;
  levels: number;
  particles: Record<string, unknown>;
}

const CASES: Case[] = [
  { name: 'hardcore 12x3, 6 particles', sites: 12, levels: 3, particles: { kind: 'hardcore', number: 6 } },
  {
    name: 'boson 10x2, 7 particles, <=3/site',
    sites: 10,
    levels: 2,
    particles: { kind: 'boson', number: 7, max_per_site: 3, onsite: 2 },
  },
  { name: 'fermion 12x2, 8 particles', sites: 12, levels: 2, particles: { kind: 'fermion', number: 8 } },
];
const SMALL: Case[] = [
  { name: 'hardcore 8x3, 4 particles', sites: 8, levels: 3, particles: { kind: 'hardcore', number: 4 } },
  {
    name: 'boson 7x2, 5 particles, <=3/site',
    sites: 7,
    levels: 2,
    particles: { kind: 'boson', number: 5, max_per_site: 3, onsite: 2 },
  },
  { name: 'fermion 8x2, 6 particles', sites: 8, levels: 2, particles: { kind: 'fermion', number: 6 } },
];
const STATES = 4;

function specFor(c: Case): Spec {
  return validateSpec({
    chain: { sites: c.sites, boundary: 'periodic' },
    levels: { count: c.levels, tunnelling: 1, detuning: Array.from({ length: c.levels }, (_, n) => 0.1 * n) },
    exchange: { strength: 1.5, range: 'nearest' },
    particles: { hopping: 1, ...c.particles },
    solve: { states: STATES, tolerance: 1e-9 },
  });
}

interface Figures {
  dimension: number;
  nonzeros: number;
  build_s: number;
  matvec_s: number;
  iterations: number;
  solve_s: number;
  peak_rss_bytes: number;
  e0: number;
}

/** Runs inside a child process: build and product timings of one case (peak memory: the operator alone). */
function measureBuild(c: Case): Omit<Figures, 'iterations' | 'solve_s' | 'e0'> {
  const spec = specFor(c);
  const t0 = performance.now();
  const model = buildModel(spec);
  const basis = buildBasis(model);
  // Built in an arena with the vectors, as solvePoint does: the product runs in WebAssembly.
  const arena = VectorArena.create();
  const op = buildOperator(model, basis, arena);
  const t1 = performance.now();
  const width = op.isComplex ? 2 : 1;
  const x = arena ? arena.vector(width * basis.dim) : new Float64Array(width * basis.dim);
  const y = arena ? arena.vector(width * basis.dim) : new Float64Array(width * basis.dim);
  for (let k = 0; k < x.length; k++) x[k] = Math.sin(k);
  op.apply(x, y); // warm the JIT before timing
  const reps = 5;
  const t2 = performance.now();
  for (let r = 0; r < reps; r++) op.apply(x, y);
  const t3 = performance.now();
  return {
    dimension: basis.dim,
    nonzeros: op.nonzeros(),
    build_s: (t1 - t0) / 1000,
    matvec_s: (t3 - t2) / reps / 1000,
    peak_rss_bytes: process.resourceUsage().maxRSS * 1024,
  };
}

/** Runs inside its own child process: end to end (basis, operator, Lanczos, observables), with its peak memory. */
function measureSolve(c: Case): Pick<Figures, 'iterations' | 'solve_s' | 'e0' | 'peak_rss_bytes'> {
  const t0 = performance.now();
  const solved = solvePoint(specFor(c));
  return {
    iterations: solved.record.solver.iterations,
    solve_s: (performance.now() - t0) / 1000,
    e0: solved.record.energies[0],
    peak_rss_bytes: process.resourceUsage().maxRSS * 1024,
  };
}

function child<T>(k: number, size: 'small' | 'full', what: 'build' | 'solve', name: string): T | null {
  const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), '--case', String(k), size, what], {
    encoding: 'utf8',
    maxBuffer: 1 << 24,
  });
  if (r.status !== 0) {
    process.stderr.write(`itinerant bench: ${name} (${what}) failed: ${r.stderr.trim().split('\n').pop()}\n`);
    return null;
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as T;
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === '--case') {
    const c = (args[2] === 'small' ? SMALL : CASES)[Number(args[1])];
    process.stdout.write(JSON.stringify(args[3] === 'solve' ? measureSolve(c) : measureBuild(c)) + '\n');
    return;
  }
  const size = args.includes('--small') ? 'small' : 'full';
  const list = size === 'small' ? SMALL : CASES;
  const rows: string[][] = [];
  list.forEach((c, k) => {
    const build = child<ReturnType<typeof measureBuild>>(k, size, 'build', c.name);
    const solve = child<ReturnType<typeof measureSolve>>(k, size, 'solve', c.name);
    if (!build) return;
    rows.push([
      c.name,
      String(build.dimension),
      String(build.nonzeros),
      fmt(build.build_s, 3),
      fmt(build.matvec_s * 1000, 3),
      fmt(build.nonzeros / build.matvec_s / 1e6, 4),
      formatBytes(build.peak_rss_bytes),
      solve ? String(solve.iterations) : '-',
      solve ? fmt(solve.solve_s, 3) : '-',
      solve ? formatBytes(solve.peak_rss_bytes) : '-',
      solve ? fmt(solve.e0, 10) : '-',
    ]);
  });
  console.log(`itinerant particles, periodic chains, J = t = 1, V = 1.5, ${STATES} lowest states, tolerance 1e-9`);
  console.log(
    table(
      ['case', 'dim', 'stored', 'build s', 'Hx ms', 'Mnz/s', 'build mem', 'products', 'solve s', 'solve mem', 'E0'],
      rows,
    ),
  );
  console.log(
    'build mem: peak of a process that only builds and applies H; solve s and solve mem: end to end in a fresh',
  );
  console.log('process (basis, operator, Lanczos, observables); stored counts the diagonal when one is stored');
}

main();
