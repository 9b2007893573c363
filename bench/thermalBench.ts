// Part of `npm run bench`: thermal curves (issue 21). A 10 x 4 periodic chain (1,048,576 states):
// 50 temperatures by finite-temperature Lanczos, wall time and peak memory beside the ground-state
// solve of the same chain, with the error bar reached; then the exact method on 6 x 4 (4096
// states, largest sector 1024 in real form), the largest chain it finished in under a minute (42 s
// on a loaded 2-core machine; 7 x 4 and 9 x 3 have complex sectors above 2000). Each case runs in a fresh process so its peak memory is its own.
//
// usage: node dist/bench/thermalBench.js [--quick]   (--quick: 8 x 4, 65,536 states)
// internal: node dist/bench/thermalBench.js --case NAME

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { readFileSync } from 'node:fs';
import { validateSpec } from '../src/spec/spec.js';
import { solvePoint } from '../src/point/solvePoint.js';
import { planThermal, runThermal } from '../src/thermal/thermal.js';
import { table } from '../src/format/tables.js';
import { formatBytes } from '../src/format/bytes.js';

const quick = process.argv.includes('--quick');
const SITES = quick ? 8 : 10;

function chain(sites: number, levels: number, thermal?: Record<string, unknown>): Record<string, unknown> {
  return {
    chain: { sites, boundary: 'periodic' },
    levels: { count: levels, tunnelling: 1 },
    exchange: { strength: 1.5 },
    ...(thermal ? { thermal } : {}),
  };
}

const TEMPERATURES = { from: 0.05, to: 10, steps: 50, spacing: 'log' };
const CASES: Record<string, () => Record<string, unknown>> = {
  ground: () => chain(SITES, 4),
  lanczos: () => chain(SITES, 4, { temperatures: TEMPERATURES, method: 'lanczos', vectors: 4, steps: 60 }),
  exact6x4: () => chain(6, 4, { temperatures: TEMPERATURES, method: 'exact' }),
};

function peakKiB(): number {
  const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'));
  return m ? Number(m[1]) : NaN;
}

function runCase(name: string): void {
  const spec = validateSpec(CASES[name]());
  const started = performance.now();
  const out: Record<string, unknown> = { name };
  if (name === 'ground') {
    const r = solvePoint(spec, { groundStates: false });
    out.dimension = r.record.basis.dimension;
    out.detail = `E0 = ${r.record.energies[0].toFixed(8)}`;
  } else {
    const plan = planThermal(spec);
    const r = runThermal(spec, plan);
    out.dimension = r.dimension;
    const worst = Math.max(...r.rows.map((row) => (row.errors ? row.errors.energy / Math.abs(row.energy) : 0)));
    out.detail =
      `${r.method}, ${r.sectors} blocks, largest ${plan.largestBlock}` +
      (r.lanczos
        ? `, ${r.lanczos.vectors} vectors x ${r.lanczos.steps} steps; largest relative error of E ${worst.toExponential(1)}`
        : '') +
      `; estimate ${formatBytes(plan.memory.totalBytes)}, ${plan.seconds.toFixed(0)} s`;
  }
  out.seconds = (performance.now() - started) / 1000;
  out.peak = peakKiB() * 1024;
  process.stdout.write(JSON.stringify(out) + '\n');
}

const at = process.argv.indexOf('--case');
if (at >= 0) runCase(process.argv[at + 1]);
else {
  const names = ['ground', 'lanczos', 'exact6x4'];
  const rows: string[][] = [];
  for (const name of names) {
    const r = spawnSync(
      process.execPath,
      [fileURLToPath(import.meta.url), '--case', name, ...(quick ? ['--quick'] : [])],
      {
        encoding: 'utf8',
        timeout: 3_600_000,
      },
    );
    const line = r.stdout.trim().split('\n').pop() ?? '';
    if (r.status !== 0 || !line.startsWith('{')) {
      rows.push([name, '-', '-', '-', `failed: ${(r.stderr || 'timeout').trim().split('\n').pop()}`]);
      continue;
    }
    const o = JSON.parse(line) as { dimension: number; seconds: number; peak: number; detail: string };
    rows.push([name, String(o.dimension), o.seconds.toFixed(1), formatBytes(o.peak), o.detail]);
    console.log(`${name}: ${o.seconds.toFixed(1)} s`);
  }
  console.log(`\nthermal curves, 50 temperatures (${SITES} x 4 periodic chain beside its ground-state solve)`);
  console.log(table(['case', 'dimension', 'seconds', 'peak memory', 'detail'], rows));
}
