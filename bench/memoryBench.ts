// Part of `npm run bench`: is the memory estimate honest? A ladder of sizes, each planned and
// solved (as `rungchain solve` does) in a fresh process, printing the estimate, the process's peak
// resident memory and their ratio. An estimate under the peak lets `--max-memory` be broken; one far
// above it refuses problems that would fit. Ratios outside [1.0, 1.3] are flagged.
//
// usage: node dist/bench/memoryBench.js [--quick] [--only NAME]

import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { planPoint, solvePoint } from '../src/point/solvePoint.js';
import { formatBytes } from '../src/format/bytes.js';
import { validateSpec, type Spec } from '../src/spec/spec.js';
import { table } from '../src/format/tables.js';

interface Case {
  name: string;
  sites: number;
  levels: number;
  symmetries?: 'auto' | 'none';
  particles?: Record<string, unknown>;
  /** Only in the full ladder (about a minute each on 2 cores). */
  slow?: boolean;
}

const CASES: Case[] = [
  ...[8, 9, 10, 11, 12, 13].map((sites) => ({ name: `pinned ${sites}x3`, sites, levels: 3 })),
  { name: 'pinned 10x4', sites: 10, levels: 4 },
  { name: 'pinned 11x4', sites: 11, levels: 4 },
  { name: 'pinned 12x4', sites: 12, levels: 4, slow: true },
  { name: 'pinned 11x3, no symmetries', sites: 11, levels: 3, symmetries: 'none' },
  { name: 'pinned 12x3, no symmetries', sites: 12, levels: 3, symmetries: 'none', slow: true },
  { name: 'hardcore 10x3, 5 particles', sites: 10, levels: 3, particles: { kind: 'hardcore', number: 5, hopping: 1 } },
  {
    name: 'hardcore 12x3, 6 particles',
    sites: 12,
    levels: 3,
    particles: { kind: 'hardcore', number: 6, hopping: 1 },
    slow: true,
  },
];

const LOW = 1.0;
const HIGH = 1.3;

function specFor(c: Case): Spec {
  return validateSpec({
    chain: { sites: c.sites, boundary: 'periodic' },
    levels: { count: c.levels, tunnelling: 1 },
    exchange: { strength: 1.5 },
    ...(c.particles ? { particles: c.particles } : {}),
    solve: {
      states: 4,
      tolerance: 1e-9,
      entanglement: 'none',
      ...(c.particles ? {} : { symmetries: c.symmetries ?? 'auto' }),
    },
  });
}

/** Resident memory figures of this process from /proc (kB there), in bytes; 0 where there is no /proc. */
function procStatus(field: 'VmHWM' | 'VmRSS'): number {
  try {
    const m = new RegExp(`^${field}:\\s+(\\d+) kB`, 'm').exec(readFileSync('/proc/self/status', 'utf8'));
    return m ? Number(m[1]) * 1024 : 0;
  } catch {
    return 0;
  }
}

interface Figures {
  dimension: number;
  estimate: number;
  parts: Record<string, number>;
  /** Resident memory once the modules are loaded, before anything is planned. */
  startRss: number;
  peak: number;
  seconds: number;
}

/** Runs inside the child process. */
function measure(c: Case): Figures {
  const startRss = procStatus('VmRSS');
  const spec = specFor(c);
  // As `rungchain solve` plans and solves: no full-space ground states handed back.
  const plan = planPoint(spec, { groundStates: false });
  const t0 = performance.now();
  solvePoint(spec, { groundStates: false });
  const seconds = (performance.now() - t0) / 1000;
  const peak = Math.max(procStatus('VmHWM'), process.resourceUsage().maxRSS * 1024);
  return {
    dimension: plan.dimension,
    estimate: plan.memory.totalBytes,
    parts: plan.memory.parts,
    startRss,
    peak,
    seconds,
  };
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === '--child') {
    const c = CASES.find((k) => k.name === args[1])!;
    process.stdout.write(JSON.stringify(measure(c)) + '\n');
    return;
  }
  const quick = args.includes('--quick');
  const only = args.includes('--only') ? args[args.indexOf('--only') + 1] : null;
  const cases = CASES.filter((c) => (only ? c.name.includes(only) : !(quick && c.slow)));
  console.log(
    `memory estimate against measured peak RSS, each case in a fresh process (want ${LOW} <= estimate/peak <= ${HIGH})`,
  );
  const rows: string[][] = [];
  let outside = 0;
  for (const c of cases) {
    const r = spawnSync(process.execPath, [fileURLToPath(import.meta.url), '--child', c.name], {
      encoding: 'utf8',
      maxBuffer: 1 << 24,
    });
    if (r.status !== 0) {
      rows.push([c.name, '', '', '', '', `failed: ${(r.stderr || '').trim().split('\n').pop()}`]);
      outside++;
      continue;
    }
    const f = JSON.parse(r.stdout.trim().split('\n').pop()!) as Figures;
    const ratio = f.estimate / f.peak;
    const ok = ratio >= LOW && ratio <= HIGH;
    if (!ok) outside++;
    const parts = Object.entries(f.parts)
      .filter(([, v]) => v >= 1 << 20)
      .map(([k, v]) => `${k} ${formatBytes(v)}`)
      .join(', ');
    rows.push([
      c.name,
      String(f.dimension),
      formatBytes(f.estimate),
      formatBytes(f.peak),
      ratio.toFixed(2) + (ok ? '' : ' OUTSIDE'),
      `${f.seconds.toFixed(1)} s; start ${formatBytes(f.startRss)}; ${parts}`,
    ]);
  }
  console.log(table(['case', 'dimension', 'estimate', 'peak RSS', 'est/peak', 'notes'], rows));
  console.log(
    outside === 0
      ? `every ratio within [${LOW}, ${HIGH}]`
      : `${outside} case${outside === 1 ? '' : 's'} outside [${LOW}, ${HIGH}]`,
  );
}

main();
