// Are the cores equal? A virtual machine's cores can differ when a core's hardware twin is busy
// with someone else's work, and then no parallel run can reach twice one core's speed. This runs
// the same plain JavaScript dot product over cache-resident arrays (a multiply-add stream, like
// the solver's vector loops) pinned to each core this process may use, in turn, with `taskset`,
// and gives the best speed-up that all those cores together allow over the fastest one alone.

import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import os from 'node:os';
import { fmt } from '../src/format/tables.js';

const LOOP = `
const n = 4096, a = new Float64Array(n), b = new Float64Array(n);
for (let i = 0; i < n; i++) { a[i] = i; b[i] = 1 / (i + 1); }
let s = 0;
const t = performance.now();
for (let r = 0; r < 40000; r++) for (let i = 0; i < n; i++) s += a[i] * b[i];
console.log(performance.now() - t, s > 0);
`;

export interface CoreSpeeds {
  /** The cores measured, and the loop's milliseconds on each (null where `taskset` is missing). */
  cores: number[] | null;
  ms: number[] | null;
  /** Sum of the cores' speeds over the fastest core's: the ceiling of any all-core speed-up. */
  ceiling: number | null;
}

/** The cores this process may run on (Linux: Cpus_allowed_list, e.g. "0-1" or "2,4-5"), else 0..n-1. */
function allowedCores(): number[] {
  try {
    const line = /Cpus_allowed_list:\s*(\S+)/.exec(readFileSync('/proc/self/status', 'utf8'))?.[1];
    if (line) {
      return line.split(',').flatMap((part) => {
        const [from, to] = part.split('-').map(Number);
        return Array.from({ length: (to ?? from) - from + 1 }, (_, k) => from + k);
      });
    }
  } catch {
    /* not Linux: fall through */
  }
  return Array.from({ length: os.availableParallelism() }, (_, k) => k);
}

export function coreSpeeds(): CoreSpeeds {
  const ms: number[] = [];
  for (const core of allowedCores()) {
    const run = spawnSync('taskset', ['-c', String(core), process.execPath, '-e', LOOP], { encoding: 'utf8' });
    if (run.status !== 0) return { cores: null, ms: null, ceiling: null };
    ms.push(Number(run.stdout.split(' ')[0]));
  }
  const fastest = Math.min(...ms);
  return { cores: allowedCores(), ms, ceiling: ms.reduce((sum, t) => sum + fastest / t, 0) };
}

export function describeCores(speeds: CoreSpeeds): string {
  if (!speeds.ms) return 'core speeds: not measured (no taskset)';
  return (
    `core speeds (one dot-product loop pinned to each core): ${speeds.ms.map((t, k) => `core ${speeds.cores![k]} ${fmt(t, 4)} ms`).join(', ')}; ` +
    `best possible speed-up of all cores over the fastest alone: ${fmt(speeds.ceiling, 3)}`
  );
}
