// Are the cores equal? A virtual machine's cores can differ when a core's hardware twin is busy
// with someone else's work, and then no parallel run can reach twice one core's speed. This runs
// the same cache-resident dot-product loop (the shape of the solver's vector kernels) pinned to
// each core in turn, with `taskset`, and gives the best speed-up that all cores together allow
// over the fastest one alone.

import { spawnSync } from 'node:child_process';
import os from 'node:os';
import { fmt } from '../src/tables.js';

const LOOP = `
const n = 4096, a = new Float64Array(n), b = new Float64Array(n);
for (let i = 0; i < n; i++) { a[i] = i; b[i] = 1 / (i + 1); }
let s = 0;
const t = performance.now();
for (let r = 0; r < 40000; r++) for (let i = 0; i < n; i++) s += a[i] * b[i];
console.log(performance.now() - t, s > 0);
`;

export interface CoreSpeeds {
  /** Milliseconds of the loop on each core, or null where `taskset` is missing. */
  ms: number[] | null;
  /** Sum of the cores' speeds over the fastest core's: the ceiling of any all-core speed-up. */
  ceiling: number | null;
}

export function coreSpeeds(): CoreSpeeds {
  const ms: number[] = [];
  for (let core = 0; core < os.availableParallelism(); core++) {
    const run = spawnSync('taskset', ['-c', String(core), process.execPath, '-e', LOOP], { encoding: 'utf8' });
    if (run.status !== 0) return { ms: null, ceiling: null };
    ms.push(Number(run.stdout.split(' ')[0]));
  }
  const fastest = Math.min(...ms);
  return { ms, ceiling: ms.reduce((sum, t) => sum + fastest / t, 0) };
}

export function describeCores(speeds: CoreSpeeds): string {
  if (!speeds.ms) return 'core speeds: not measured (no taskset)';
  return (
    `core speeds (one dot-product loop pinned to each core): ${speeds.ms.map((t, core) => `core ${core} ${fmt(t, 4)} ms`).join(', ')}; ` +
    `best possible speed-up of all cores over the fastest alone: ${fmt(speeds.ceiling!, 3)}`
  );
}
