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
      const keepStates = process.argv[2] || undefined;
      const estimate = planPoint(spec, { groundStates: false, keepStates }).memory.totalBytes;
      solvePoint(spec, { groundStates: false, keepStates });
      const peak = Number(/VmHWM:\\s+(\\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'))[1]) * 1024;
      console.log(JSON.stringify({ estimate, peak }));`;
      // Solves that keep states for saving (solve --save-states): every solved state, on the full space.
      const keeping = [spec(10), spec(9, { solve: { states: 6, entanglement: 'none' } })].map(
        (c) => [c, 'all'] as const,
      );
      for (const [c, keep] of [...cases.map((c) => [c, ''] as const), ...keeping]) {
        const r = spawnSync(process.execPath, ['--input-type=module', '-e', child, JSON.stringify(c), keep], {
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

  it('counts the states kept for saving after a sector solve: the ground level, or every solved state', () => {
    const s = validateSpec(spec(10));
    const dim = 3 ** 10;
    const plain = planPoint(s, { groundStates: false }).memory.parts;
    expect(plain.saved_states).toBeUndefined();
    // --save-states: the ground level's copies are expanded to the full space even when the caller
    // does not want ground states otherwise.
    const ground = planPoint(s, { groundStates: false, keepStates: 'ground' }).memory.parts;
    expect(ground.ground_states).toBe(2 * dim * 16);
    expect(ground.saved_states).toBeUndefined();
    // --save-states-all: every one of the 4 solved states as an interleaved complex vector of the
    // full space, 16 bytes an entry (complex128; common practice).
    const all = planPoint(s, { groundStates: false, keepStates: 'all' });
    expect(all.used).not.toBeNull();
    expect(all.memory.parts.saved_states).toBe(4 * dim * 16);
    // A full-space solve keeps its eigenvectors anyway: they are already the `eigenvectors` part.
    const full = validateSpec(spec(8, { solve: { states: 4, entanglement: 'none', symmetries: 'none' } }));
    expect(planPoint(full, { keepStates: 'all' }).memory.parts).toEqual(planPoint(full).memory.parts);
  });

  it('counts the reordered copies of the ground states that site-list entanglement makes', () => {
    const dim = 3 ** 8;
    const parts = (entanglement: unknown, symmetries = 'auto') =>
      planPoint(validateSpec(spec(8, { solve: { states: 4, entanglement, symmetries } }))).memory.parts;
    // Sites 0..|A|-1 are read in place; any other list is copied once per state, for a real H as
    // real vectors in both paths.
    for (const symmetries of ['auto', 'none']) {
      expect(parts([[0, 1, 2]], symmetries).reordered_states).toBeUndefined();
      expect(parts([[0, 2, 5]], symmetries).reordered_states).toBe(4 * dim * 8);
      expect(
        parts(
          [
            [2, 1, 0],
            [0, 1],
          ],
          symmetries,
        ).reordered_states,
      ).toBeUndefined();
    }
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
