import { describe, expect, it } from 'vitest';
import { buildBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { PinnedOperator } from '../../src/operator/pinned.js';
import { VectorArena } from '../../src/simd/arena.js';
import { lowestEigenpairs } from '../../src/solver/eigensolver.js';
import { BLOCK, plainKernels, VectorKernels } from '../../src/linalg/vectorKernels.js';
import { KernelTeam } from '../../src/linalg/kernelTeam.js';
import { validateSpec } from '../../src/spec/spec.js';
import { ofKind } from '../support/narrow.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';

// Splitting a sum over entries between threads and adding the partial sums changes only the order
// of additions (common practice): the team must agree with one thread to rounding, and the
// solver must find the same eigenvalues.

function fill(v: Float64Array, seed: number): Float64Array {
  const r = rng(seed);
  for (let i = 0; i < v.length; i++) v[i] = r() - 0.5;
  return v;
}

/** A real pinned operator on 11 sites x 3 levels (177,147 states: long enough for the team). */
function realPinnedOperator(seed: number): PinnedOperator {
  const raw = randomPinnedSpec(seed, 11, 3);
  raw.levels.phase = raw.levels.phase.map(() => 0);
  const model = buildModel(validateSpec(clean(raw)));
  return new PinnedOperator(model, ofKind(buildBasis(model), 'pinned'));
}

describe('vector kernels on two threads', () => {
  it.each([false, true])('project, subtract with dots, combine: complex %s', (isComplex) => {
    const arena = VectorArena.create();
    if (!arena) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
    const length = isComplex ? 2 * (3 * BLOCK + 501) : 5 * BLOCK + 77;
    const count = 7;
    const one = new VectorKernels(arena);
    const two = new VectorKernels(arena);
    const twoTeam = KernelTeam.start(arena, 2);
    two.team = twoTeam;
    expect(two.team).not.toBeNull();
    try {
      const set = Array.from({ length: count }, (_, i) => fill(arena.vector(length), 20 + i));
      const w1 = fill(arena.vector(length), 3);
      const w2a = arena.vector(length);
      w2a.set(w1);
      const c1 = arena.vector(2 * count);
      const c2 = arena.vector(2 * count);
      one.project(w1, set, count, isComplex, c1);
      two.project(w2a, set, count, isComplex, c2);
      for (let i = 0; i < 2 * count; i++) expect(Math.abs(c2[i] - c1[i])).toBeLessThan(1e-11);
      const n1 = arena.vector(2 * count);
      const n2 = arena.vector(2 * count);
      const norm1 = one.subtract(w1, set, count, isComplex, c1, n1);
      const norm2 = two.subtract(w2a, set, count, isComplex, c1, n2);
      expect(Array.from(w2a)).toEqual(Array.from(w1)); // entry-wise updates: identical
      expect(Math.abs(norm2 - norm1)).toBeLessThan(1e-12 * norm1);
      for (let i = 0; i < 2 * count; i++) expect(Math.abs(n2[i] - n1[i])).toBeLessThan(1e-9);
      const y = fill(arena.vector(count * count), 9);
      const copy = set.map((v) => {
        const c = arena.vector(length);
        c.set(v);
        return c;
      });
      one.combine(set, count, y, count, 4, arena.vector(4 * BLOCK));
      two.combine(copy, count, y, count, 4, arena.vector(4 * BLOCK));
      for (let c = 0; c < count; c++) expect(Array.from(copy[c])).toEqual(Array.from(set[c]));
    } finally {
      twoTeam?.close();
    }
  });

  it('with the arena full (wasm32 stops at 4 GiB), the kernels fall back to one thread', () => {
    const arena = VectorArena.create()!;
    const kernels = new VectorKernels(arena);
    const n = 1 << 17;
    const set = Array.from({ length: 5 }, (_, i) => fill(arena.vector(n), 30 + i));
    const w = fill(arena.vector(n), 40);
    const coef = arena.vector(10);
    const team = KernelTeam.start(arena, 2);
    kernels.team = team;
    try {
      // Fill the rest (address space only: fresh pages are never touched).
      while (arena.owns(arena.vector(1 << 26)));
      while (arena.owns(arena.vector(1 << 12)));
      const expected = new Float64Array(5);
      plainKernels.project(Float64Array.from(w), set, 5, false, expected);
      kernels.project(w, set, 5, false, coef);
      for (let i = 0; i < 5; i++) expect(Math.abs(coef[i] - expected[i])).toBeLessThan(1e-9);
      const copy = Float64Array.from(w);
      const normSquared = kernels.subtract(w, set, 5, false, coef, null);
      plainKernels.subtract(copy, set, 5, false, Float64Array.from(coef), null);
      for (let t = 0; t < n; t += 997) expect(Math.abs(w[t] - copy[t])).toBeLessThan(1e-12);
      expect(normSquared).toBeGreaterThan(0);
    } finally {
      team?.close();
    }
  });

  it('the solver finds the same eigenvalues with its kernels on two threads', () => {
    const op = realPinnedOperator(91);
    expect(op.dim).toBeGreaterThanOrEqual(1 << 17);
    const options = { states: 3, tolerance: 1e-9, seed: 4 };
    const single = lowestEigenpairs(op, { ...options, threads: 1 });
    const double = lowestEigenpairs(op, { ...options, threads: 2 });
    expect(single.threads).toBe(1);
    expect(double.threads).toBe(2);
    expect(single.converged && double.converged).toBe(true);
    for (let k = 0; k < 3; k++) expect(Math.abs(double.values[k] - single.values[k])).toBeLessThan(1e-9);
    for (const r of double.residuals) expect(r).toBeLessThanOrEqual(1e-9);
  }, 120_000);

  it('a team the caller keeps serves solve after solve on its arena, with the same eigenvalues', () => {
    const op = realPinnedOperator(92);
    const arena = VectorArena.create()!;
    const team = KernelTeam.start(arena, 2)!;
    expect(team).not.toBeNull();
    try {
      const options = { states: 2, tolerance: 1e-9, seed: 5 };
      const single = lowestEigenpairs(op, { ...options, states: 3, threads: 1 });
      // Two solves in a row on the arena, as a sector-by-sector solve does; the second also
      // deflates against the first's states, so it allocates differently in the arena.
      const first = lowestEigenpairs(op, { ...options, threads: 2, arena, team });
      const second = lowestEigenpairs(op, { ...options, states: 1, threads: 2, arena, team, deflate: first.vectors });
      expect(first.threads).toBe(2);
      expect(second.threads).toBe(2);
      for (let k = 0; k < 2; k++) expect(Math.abs(first.values[k] - single.values[k])).toBeLessThan(1e-9);
      // The next level up: what is left after the two lowest are projected out.
      expect(Math.abs(second.values[0] - single.values[2])).toBeLessThan(1e-8);
    } finally {
      team.close();
    }
  }, 120_000);
});
