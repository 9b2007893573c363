// Part of `npm run bench`: what solve.observables = "each" costs against "ground" on a 10x4 periodic
// chain (J = 1, V = 1.5, 4 states), in symmetry sectors and in the full space: seconds and peak
// resident memory side by side, best of 3, each run in a fresh process so its peak is its own.
//
// usage: node dist/bench/eachStateBench.js [--runs N]

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { planPoint, solvePoint } from '../src/point/solvePoint.js';
import { buildBasis, type PinnedBasis } from '../src/basis/basis.js';
import { buildModel } from '../src/model/model.js';
import { basisProbabilities, pinnedObservables } from '../src/observables/pinned.js';
import { formatBytes } from '../src/format/bytes.js';
import { validateSpec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';

interface Figures {
  seconds: number;
  peakBytes: number;
  estimateBytes: number;
  states: number;
}

function chainSpec(symmetries: string, observables: string) {
  return validateSpec({
    chain: { sites: 10, boundary: 'periodic' },
    levels: { count: 4, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 4, tolerance: 1e-9, symmetries, observables, entanglement: 'none' },
  });
}

/** One solve as `rungchain solve --json` runs it (no full-space ground states asked for). */
function runCase(symmetries: string, observables: string): Figures {
  const spec = chainSpec(symmetries, observables);
  const estimateBytes = planPoint(spec).memory.totalBytes;
  const t0 = performance.now();
  const { record } = solvePoint(spec, { maxMemory: Number.MAX_SAFE_INTEGER, groundStates: false });
  const seconds = (performance.now() - t0) / 1000;
  return {
    seconds,
    peakBytes: process.resourceUsage().maxRSS * 1024,
    estimateBytes,
    states: record.states?.length ?? 0,
  };
}

function child(symmetries: string, observables: string): Figures | null {
  const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), '--case', symmetries, observables], {
    encoding: 'utf8',
    maxBuffer: 1 << 24,
  });
  if (r.status !== 0) {
    process.stderr.write(
      `each-state bench: ${symmetries} ${observables} failed: ${r.stderr.trim().split('\n').slice(-3).join(' | ')}\n`,
    );
    return null;
  }
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as Figures;
}

/** Best of `runs`: the least time and the least peak (the quietest run of a shared machine). */
function best(symmetries: string, observables: string, runs: number): Figures | null {
  const all = Array.from({ length: runs }, () => child(symmetries, observables)).filter(
    (f): f is Figures => f !== null,
  );
  if (all.length === 0) return null;
  return {
    seconds: Math.min(...all.map((f) => f.seconds)),
    peakBytes: Math.min(...all.map((f) => f.peakBytes)),
    estimateBytes: all[0].estimateBytes,
    states: all[0].states,
  };
}

/**
 * What "each" adds per state, timed alone (best of `runs`): one state's probabilities on the full
 * basis and the observables from them; a share of a whole solve that a loaded machine's noise hides.
 */
function oneStateObservablesSeconds(runs: number): { seconds: number; dimension: number } {
  const spec = chainSpec('none', 'each');
  const basis = buildBasis(buildModel(spec)) as PinnedBasis;
  const psi = new Float64Array(basis.dim).fill(1 / Math.sqrt(basis.dim));
  let seconds = Infinity;
  for (let r = 0; r < runs; r++) {
    const t0 = performance.now();
    pinnedObservables(basis, basisProbabilities([psi], basis.dim, false), { periodic: true });
    seconds = Math.min(seconds, (performance.now() - t0) / 1000);
  }
  return { seconds, dimension: basis.dim };
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === '--case') {
    process.stdout.write(JSON.stringify(runCase(args[1], args[2])) + '\n');
    return;
  }
  const at = args.indexOf('--runs');
  const runs = at >= 0 ? Math.max(1, Number(args[at + 1])) : 3;
  const rows: string[][] = [];
  for (const symmetries of ['auto', 'none']) {
    const ground = best(symmetries, 'ground', runs);
    const each = best(symmetries, 'each', runs);
    if (!ground || !each) continue;
    rows.push([
      symmetries === 'auto' ? 'sectors' : 'full space',
      fmt(ground.seconds, 3),
      fmt(each.seconds, 3),
      `${fmt((100 * (each.seconds - ground.seconds)) / ground.seconds, 2)}%`,
      formatBytes(ground.peakBytes),
      formatBytes(each.peakBytes),
      formatBytes(ground.estimateBytes),
      formatBytes(each.estimateBytes),
      String(each.states),
    ]);
  }
  console.log(
    `solve.observables = "each" against "ground": 10x4 periodic chain, J = 1, V = 1.5, 4 states, best of ${runs}`,
  );
  console.log(
    table(
      [
        'solve',
        'ground s',
        'each s',
        'each extra',
        'ground peak',
        'each peak',
        'ground estimate',
        'each estimate',
        'states listed',
      ],
      rows,
    ),
  );
  const one = oneStateObservablesSeconds(runs);
  console.log(
    `observables of one state on the full basis (${one.dimension} states), timed alone: ${fmt(one.seconds, 3)} s`,
  );
}

main();
