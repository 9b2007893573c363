// `npm run bench`: pinned chains up to 10 sites x 4 levels (periodic, about a million states), each
// size in a fresh process so peak memory is its own, side by side with the NumPy/SciPy baseline in
// bench/scipyBaseline.py building the same matrix and calling its sparse eigensolver.
//
// usage: node dist/bench/bench.js [--sizes 6,8,10] [--no-baseline]

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import path from 'node:path';
import { buildBasis } from '../src/basis/basis.js';
import { buildModel } from '../src/model/model.js';
import { buildOperator } from '../src/operator/build.js';
import { solvePoint } from '../src/point/solvePoint.js';
import { VectorArena } from '../src/simd/arena.js';
import { validateSpec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';
import { formatBytes } from '../src/format/bytes.js';

const LEVELS = 4;
const STATES = 4;
const J = 1;
const V = 1.5;
const here = path.dirname(fileURLToPath(import.meta.url));
const repo = path.resolve(here, '../..');

interface Figures {
  dimension: number;
  nonzeros: number;
  build_s: number;
  matvec_s: number;
  iterations: number;
  total_s: number;
  peak_rss_bytes: number;
  energies: number[];
}

function specFor(sites: number) {
  return validateSpec({
    chain: { sites, boundary: 'periodic' },
    levels: { count: LEVELS, tunnelling: J },
    exchange: { strength: V },
    // The full space on purpose: the comparison is matrix against matrix (sectors: sectorsBench.ts).
    solve: { states: STATES, tolerance: 1e-9, symmetries: 'none', entanglement: 'none' },
  });
}

/** Runs inside a child process: one size, figures as one JSON line. */
function measureOne(sites: number): Figures {
  const spec = specFor(sites);
  const t0 = performance.now();
  const model = buildModel(spec);
  const basis = buildBasis(model);
  const op = buildOperator(model, basis);
  const t1 = performance.now();
  // Vectors in an arena, as the solver keeps them: the product then runs its SIMD loops.
  const arena = VectorArena.create();
  const x = arena ? arena.vector(basis.dim) : new Float64Array(basis.dim);
  const y = arena ? arena.vector(basis.dim) : new Float64Array(basis.dim);
  for (let k = 0; k < basis.dim; k++) x[k] = Math.sin(k);
  op.apply(x, y); // warm the JIT before timing
  const reps = 5;
  const t2 = performance.now();
  for (let r = 0; r < reps; r++) op.apply(x, y);
  const t3 = performance.now();
  const solved = solvePoint(spec); // end to end: builds again, solves, observables
  const t4 = performance.now();
  return {
    dimension: basis.dim,
    nonzeros: op.nonzeros(),
    build_s: (t1 - t0) / 1000,
    matvec_s: (t3 - t2) / reps / 1000,
    iterations: solved.record.solver.iterations,
    total_s: (t4 - t3) / 1000,
    peak_rss_bytes: process.resourceUsage().maxRSS * 1024,
    energies: solved.record.energies,
  };
}

function runChild(cmd: string, args: string[], env: NodeJS.ProcessEnv = process.env): Figures | null {
  const r = spawnSync(cmd, args, { encoding: 'utf8', env, maxBuffer: 1 << 24 });
  if (r.status !== 0) {
    process.stderr.write(`bench: ${cmd} ${args.join(' ')} failed: ${r.stderr.trim().split('\n').pop()}\n`);
    return null;
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as Figures;
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === '--case') {
    process.stdout.write(JSON.stringify(measureOne(Number(args[1]))) + '\n');
    return;
  }
  const sizesArg = args.indexOf('--sizes');
  const sizes = sizesArg >= 0 ? args[sizesArg + 1].split(',').map(Number) : [6, 7, 8, 9, 10];
  const baseline = !args.includes('--no-baseline');
  // NumPy is measured without this machine's OpenBLAS overrides, which slow a current NumPy.
  const pyEnv = { ...process.env };
  delete pyEnv.OPENBLAS_CORETYPE;
  delete pyEnv.OPENBLAS_L2_SIZE;
  const rows: string[][] = [];
  for (const L of sizes) {
    const ours = runChild(process.execPath, [fileURLToPath(import.meta.url), '--case', String(L)]);
    const theirs = baseline
      ? runChild(
          'python3',
          [path.join(repo, 'bench/scipyBaseline.py'), String(L), String(LEVELS), String(STATES), String(J), String(V)],
          pyEnv,
        )
      : null;
    if (!ours) continue;
    const agree = theirs ? Math.max(...ours.energies.map((e, k) => Math.abs(e - theirs.energies[k]))) : NaN;
    rows.push([
      `${L}x${LEVELS}`,
      String(ours.dimension),
      String(ours.nonzeros),
      fmt(ours.build_s, 3),
      fmt(ours.matvec_s * 1000, 3),
      fmt(ours.nonzeros / ours.matvec_s / 1e6, 4),
      String(ours.iterations),
      fmt(ours.total_s, 3),
      formatBytes(ours.peak_rss_bytes),
      theirs ? fmt(theirs.matvec_s * 1000, 3) : '-',
      theirs ? String(theirs.iterations) : '-',
      theirs ? fmt(theirs.total_s, 3) : '-',
      theirs ? formatBytes(theirs.peak_rss_bytes) : '-',
      theirs ? fmt(theirs.total_s / ours.total_s, 3) : '-',
      theirs ? fmt(theirs.peak_rss_bytes / ours.peak_rss_bytes, 3) : '-',
      theirs ? agree.toExponential(1) : '-',
    ]);
  }
  console.log(`pinned chain, periodic, ${LEVELS} levels, J=${J}, V=${V}, ${STATES} lowest states, tolerance 1e-9`);
  console.log(
    table(
      [
        'size',
        'dim',
        'nonzeros',
        'build s',
        'Hx ms',
        'Mnz/s',
        'products',
        'solve s',
        'peak mem',
        'scipy Hx ms',
        'scipy products',
        'scipy s',
        'scipy mem',
        'time ratio',
        'mem ratio',
        'max |dE|',
      ],
      rows,
    ),
  );
  console.log('ratios are scipy / rungchain: above 1 means rungchain is faster or leaner');
}

main();
