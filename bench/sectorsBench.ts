// Part of `npm run bench`: symmetry sectors and both cores against the full space, the largest
// chains, the honesty of the memory estimate, and product throughput against memory bandwidth.
// Each case runs in a fresh process so its peak memory is its own.
//
// usage: node dist/bench/sectorsBench.js [--quick]

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { buildBasis } from '../src/basis/basis.js';
import { buildModel } from '../src/model/model.js';
import { PinnedOperator } from '../src/operator/pinned.js';
import { ThreadedOperator, withThreads } from '../src/operator/threaded.js';
import { planPoint, solvePoint } from '../src/point/solvePoint.js';
import { formatBytes } from '../src/format/bytes.js';
import { VectorArena } from '../src/simd/arena.js';
import { validateSpec } from '../src/spec/spec.js';
import { momentumText, type SectorLabel } from '../src/symmetry/group.js';
import { fmt, table } from '../src/format/tables.js';
import { coreSpeeds, describeCores } from './cores.js';

interface CaseFigures {
  seconds: number;
  products: number;
  energies: number[];
  peakBytes: number;
  estimateBytes: number;
  labels: string[];
  sectors: number;
  /** Products times the length of the vectors they act on (complex entries counted twice), over all sectors (or the full space). */
  work: number;
  /** The same, over the sectors that hold one of the answer's states only. */
  answerWork: number;
}

/** threads 0: the default ('auto': as many as each product pays for). */
function chainSpec(sites: number, levels: number, symmetries: string, threads: number) {
  return validateSpec({
    chain: { sites, boundary: 'periodic' },
    levels: { count: levels, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 4, tolerance: 1e-9, symmetries, threads: threads === 0 ? 'auto' : threads, entanglement: 'none' },
  });
}

function runCase(sites: number, levels: number, symmetries: string, threads: number): CaseFigures {
  const spec = chainSpec(sites, levels, symmetries, threads);
  const estimate = planPoint(spec).memory.totalBytes;
  const t0 = performance.now();
  const { record } = solvePoint(spec, { maxMemory: Number.MAX_SAFE_INTEGER, groundStates: false });
  const seconds = (performance.now() - t0) / 1000;
  const runs = record.solver.sector_runs ?? [];
  const same = (a: SectorLabel, b: SectorLabel) =>
    a.momentum === b.momentum && a.parity === b.parity && a.level_flip === b.level_flip && a.charge === b.charge;
  // Momenta other than 0 and pi have complex amplitudes: twice the numbers per vector entry.
  const entries = (r: (typeof runs)[number]) =>
    r.dimension *
    (r.label.momentum !== null && r.label.momentum !== 0 && 2 * (r.label.momentum as number) !== sites ? 2 : 1);
  const holdsAnswer = (r: (typeof runs)[number]) =>
    !r.screened && (record.sectors ?? []).some((l) => same(l, r.label) || r.copies.some((c) => same(l, c)));
  // The full space's vectors are real here (real couplings), one number an entry.
  const work =
    runs.length > 0
      ? runs.reduce((s, r) => s + r.iterations * entries(r), 0)
      : record.solver.iterations * record.basis.dimension;
  return {
    work,
    answerWork: runs.length > 0 ? runs.filter(holdsAnswer).reduce((s, r) => s + r.iterations * entries(r), 0) : work,
    seconds,
    products: record.solver.iterations,
    energies: record.energies,
    peakBytes: process.resourceUsage().maxRSS * 1024,
    estimateBytes: estimate,
    labels: (record.sectors ?? []).map(
      (l) =>
        `k=${momentumText(l.momentum)}${l.parity === null ? '' : l.parity > 0 ? ',P+' : ',P-'}${l.level_flip === null ? '' : l.level_flip > 0 ? ',F+' : ',F-'}`,
    ),
    sectors: record.solver.sector_runs?.length ?? 1,
  };
}

/**
 * Memory bandwidth, one thread: the SIMD update y += s x over arrays far larger than cache (the
 * triad's traffic: two reads and a write per entry), so the figure is the memory's, not V8's.
 */
function triadBandwidth(): number {
  const n = 1 << 24;
  const arena = VectorArena.create();
  if (!arena) throw new Error('no WebAssembly SIMD here');
  const x = arena.vector(n).fill(1);
  const y = arena.vector(n).fill(2);
  let best = Infinity;
  for (let rep = 0; rep < 5; rep++) {
    const t0 = performance.now();
    arena.wasm.axpy(y.byteOffset, x.byteOffset, 0.5, n);
    best = Math.min(best, performance.now() - t0);
  }
  return (3 * 8 * n) / (best / 1000);
}

/** Seconds per product of the on-the-fly kernel, and the bytes it streams per product. */
function productFigures(
  sites: number,
  levels: number,
  threads: number,
): { seconds: number; bytes: number; nonzeros: number } {
  const spec = chainSpec(sites, levels, 'none', threads);
  const model = buildModel(spec);
  const basis = buildBasis(model);
  if (basis.kind !== 'pinned') throw new Error('pinned only');
  const op = new PinnedOperator(model, basis);
  const threaded = withThreads(op, threads, model, basis);
  // Vectors where the solver keeps them: the threads' arena, or an arena of their own.
  const arena = (threaded instanceof ThreadedOperator ? threaded.arena : null) ?? VectorArena.create();
  const x = arena ? arena.vector(op.dim) : new Float64Array(op.dim);
  const y = arena ? arena.vector(op.dim) : new Float64Array(op.dim);
  for (let k = 0; k < op.dim; k++) x[k] = Math.sin(k);
  threaded.apply(x, y);
  let best = Infinity;
  for (let rep = 0; rep < 5; rep++) {
    const t0 = performance.now();
    threaded.apply(x, y);
    best = Math.min(best, performance.now() - t0);
  }
  threaded.close();
  const nonzeros = op.nonzeros();
  // Each stored-equivalent element is one streamed read of x and a read-modify-write of y (24 bytes);
  // the diagonal pass reads the diagonal and x and writes y.
  const bytes = 24 * (nonzeros - op.dim) + 24 * op.dim;
  return { seconds: best / 1000, bytes, nonzeros };
}

function child(args: string[]): CaseFigures | null {
  const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), ...args], {
    encoding: 'utf8',
    maxBuffer: 1 << 24,
  });
  if (r.status !== 0) {
    process.stderr.write(
      `sectors bench: case ${args.join(' ')} failed: ${r.stderr.trim().split('\n').slice(-3).join(' | ')}\n`,
    );
    return null;
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as CaseFigures;
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === '--case') {
    const [, L, N, sym, threads] = args;
    process.stdout.write(JSON.stringify(runCase(Number(L), Number(N), sym, Number(threads))) + '\n');
    return;
  }
  if (args[0] === '--products') {
    const [, L, N, threads] = args;
    process.stdout.write(JSON.stringify(productFigures(Number(L), Number(N), Number(threads))) + '\n');
    return;
  }
  const quick = args.includes('--quick');
  const cases: [string, number, number, string, number][] = quick
    ? [
        ['full space, 1 thread', 8, 4, 'none', 1],
        ['full space, 2 threads', 8, 4, 'none', 2],
        ['sectors, threads auto', 8, 4, 'auto', 0],
      ]
    : [
        ['full space, 1 thread', 10, 4, 'none', 1],
        ['full space, 2 threads', 10, 4, 'none', 2],
        ['sectors, 1 thread', 10, 4, 'auto', 1],
        ['sectors, threads auto', 10, 4, 'auto', 0],
        ['sectors, threads auto', 12, 4, 'auto', 0],
        ['sectors, threads auto', 16, 3, 'auto', 0],
      ];
  const rows: string[][] = [];
  let fullSeconds = NaN;
  let fullWork = NaN;
  const ceilings: string[] = [];
  for (const [name, L, N, sym, threads] of cases) {
    const f = child(['--case', String(L), String(N), sym, String(threads)]);
    if (!f) continue;
    if (name === 'full space, 1 thread' && L === cases[0][1]) [fullSeconds, fullWork] = [f.seconds, f.work];
    if (sym !== 'none' && L === cases[0][1]) {
      ceilings.push(
        `${L}x${N} ${name}: full-space work / the answer's sectors' work = ${fmt(fullWork / f.answerWork, 3)} ` +
          `(all sectors: ${fmt(fullWork / f.work, 3)}; measured wall-time speed-up ${fmt(fullSeconds / f.seconds, 3)})`,
      );
    }
    rows.push([
      `${L}x${N} ${name}`,
      String(N ** L),
      String(f.sectors),
      fmt(f.seconds, 3),
      String(f.products),
      L === cases[0][1] ? fmt(fullSeconds / f.seconds, 3) : '-',
      formatBytes(f.peakBytes),
      formatBytes(f.estimateBytes),
      fmt(f.estimateBytes / f.peakBytes, 3),
      f.energies.map((e) => e.toFixed(8)).join(' '),
      f.labels.join(' '),
    ]);
  }
  console.log('pinned periodic chains, J=1, V=1.5, 4 lowest states, tolerance 1e-9');
  console.log(
    table(
      [
        'case',
        'states',
        'sectors',
        'seconds',
        'products',
        'speed-up vs full 1 thread',
        'peak mem',
        'estimate',
        'estimate/peak',
        'energies',
        'sectors of the 4 states',
      ],
      rows,
    ),
  );

  // The Lanczos work (products times vector entries) bounds what sectors can gain: the sectors that
  // hold the answer must each be converged, so even with every screen and every build free, a
  // sector solve cannot be faster than the full space by more than full work / their work.
  console.log('');
  console.log(
    'ceiling of any sector speed-up with this eigensolver (work: products x vector entries, complex entries twice):',
  );
  for (const line of ceilings) console.log(`  ${line}`);

  const bw = triadBandwidth();
  const productRows: string[][] = [];
  const [L, N] = quick ? [8, 4] : [10, 4];
  for (const threads of [1, 2]) {
    const p = child(['--products', String(L), String(N), String(threads)]) as unknown as {
      seconds: number;
      bytes: number;
      nonzeros: number;
    } | null;
    if (!p) continue;
    productRows.push([
      `${L}x${N}, ${threads} thread${threads > 1 ? 's' : ''}`,
      fmt(p.seconds * 1000, 3),
      fmt(p.nonzeros / p.seconds / 1e6, 4),
      fmt(p.bytes / p.seconds / 1e9, 3),
      fmt(p.bytes / p.seconds / bw, 3),
    ]);
  }
  console.log('');
  console.log(describeCores(coreSpeeds()));
  console.log(`memory bandwidth (SIMD triad y += s x, one thread): ${fmt(bw / 1e9, 3)} GB/s`);
  console.log(
    table(['on-the-fly product', 'ms', 'M elements/s', 'GB/s streamed', 'fraction of triad bandwidth'], productRows),
  );
}

main();
