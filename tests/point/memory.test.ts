import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { planPoint } from '../../src/point/solvePoint.js';
import {
  assertWithinMemory,
  estimateSolveMemory,
  HELPER_THREAD_BYTES,
  RUNTIME_BASELINE_BYTES,
} from '../../src/point/memory.js';
import { validateSpec } from '../../src/spec/spec.js';
import { ROOT } from '../support/cli.js';

describe('memory estimates', () => {
  const spec = (sites: number, extra: Record<string, unknown> = {}) => ({
    chain: { sites, boundary: 'periodic' },
    levels: { count: 3, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 4, entanglement: 'none' },
    ...extra,
  });

  // What the estimate must bound is the peak resident memory of the process that solves (common
  // practice: the kernel's high-water mark, VmHWM in /proc/self/status). Each case is solved as
  // `rungchain solve` does, in a fresh process of the built engine.
  it.skipIf(!existsSync('/proc/self/status'))(
    'is at least the peak resident memory of a fresh process that solves the problem',
    () => {
      const cases = [
        spec(8),
        spec(10),
        spec(9, { solve: { states: 4, entanglement: 'none', symmetries: 'none' } }),
        spec(8, { particles: { kind: 'hardcore', number: 4, hopping: 1 } }),
      ];
      const child = `
      import { readFileSync } from 'node:fs';
      const { planPoint, solvePoint } = await import(${JSON.stringify(path.join(ROOT, 'dist/src/point/solvePoint.js'))});
      const { validateSpec } = await import(${JSON.stringify(path.join(ROOT, 'dist/src/spec/spec.js'))});
      const spec = validateSpec(JSON.parse(process.argv[1]));
      const estimate = planPoint(spec, { groundStates: false }).memory.totalBytes;
      solvePoint(spec, { groundStates: false });
      const peak = Number(/VmHWM:\\s+(\\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'))[1]) * 1024;
      console.log(JSON.stringify({ estimate, peak }));`;
      for (const c of cases) {
        const r = spawnSync(process.execPath, ['--input-type=module', '-e', child, JSON.stringify(c)], {
          encoding: 'utf8',
        });
        expect(r.status, r.stderr).toBe(0);
        const { estimate, peak } = JSON.parse(r.stdout);
        expect(estimate, JSON.stringify(c)).toBeGreaterThanOrEqual(peak);
      }
    },
  );

  it('counts the runtime, each helper thread, and the ground states only when they are handed back', () => {
    const base = {
      dim: 1 << 20,
      isComplex: false,
      operatorBytes: 0,
      krylovVectors: 20,
      states: 4,
      denseThreshold: 100,
    };
    const one = estimateSolveMemory(base);
    expect(one.parts.runtime).toBe(RUNTIME_BASELINE_BYTES);
    // a second product thread brings a product helper and a vector-kernel helper, each its own isolate
    expect(estimateSolveMemory({ ...base, threads: 2 }).totalBytes - one.totalBytes).toBe(2 * HELPER_THREAD_BYTES);
    const s = validateSpec(spec(10));
    expect(planPoint(s).memory.parts.ground_states).toBe(2 * 3 ** 10 * 16);
    expect(planPoint(s, { groundStates: false }).memory.parts.ground_states).toBeUndefined();
  });
});

describe('a problem over the memory limit', () => {
  const estimate = { totalBytes: 3 * 2 ** 20, parts: {} };

  it('names how the limit is raised only when the caller says how', () => {
    expect(() => assertWithinMemory(estimate, 2 ** 20, 'this problem', '--max-memory')).toThrow(
      /^this problem needs an estimated 3\.00 MiB, more than the memory limit 1\.00 MiB \(raise it with --max-memory, or use symmetry sectors \/ fewer states\)$/,
    );
    expect(() => assertWithinMemory(estimate, 2 ** 20, 'this problem')).toThrow(
      /\(raise it, or use symmetry sectors \/ fewer states\)$/,
    );
    expect(() => assertWithinMemory(estimate, 4 * 2 ** 20, 'this problem')).not.toThrow();
  });
});
