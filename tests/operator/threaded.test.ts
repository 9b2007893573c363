import { describe, expect, it } from 'vitest';
import { buildBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { CsrBuilder } from '../../src/operator/csr.js';
import { PinnedOperator } from '../../src/operator/pinned.js';
import { ProductTeam, withThreads } from '../../src/operator/threaded.js';
import { VectorArena } from '../../src/simd/arena.js';
import { validateSpec } from '../../src/spec/spec.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';
import { ofKind } from '../support/narrow.js';

// Splitting a product by rows must not change it: every slice is computed from the same formula,
// so the pieces put together equal the one-thread product to the last bit (common practice).
function randomVector(length: number, seed: number): Float64Array {
  const r = rng(seed);
  return Float64Array.from({ length }, () => r() - 0.5);
}

/** A random pinned operator, a random vector and their one-thread product. */
function pinnedProduct(seed: number, L: number, N: number) {
  const spec = validateSpec(clean(randomPinnedSpec(seed, L, N)));
  const model = buildModel(spec);
  const basis = ofKind(buildBasis(model), 'pinned');
  const op = new PinnedOperator(model, basis);
  const c = op.isComplex ? 2 : 1;
  const x = randomVector(c * op.dim, seed);
  const product = new Float64Array(c * op.dim);
  op.apply(x, product);
  return { op, c, x, product, model, basis };
}

describe('products split by rows', () => {
  it.each([
    [61, 6, 3],
    [62, 5, 4],
    [63, 9, 2],
  ])('pinned operator slices equal the whole product (seed %i, L=%i, N=%i)', (seed, L, N) => {
    const { op, c, x, product: whole } = pinnedProduct(seed, L, N);
    const pieces = new Float64Array(c * op.dim);
    const r = rng(seed + 1);
    const cuts = [0, ...Array.from({ length: 4 }, () => Math.floor(r() * op.dim)).sort((a, b) => a - b), op.dim];
    for (let k = 0; k + 1 < cuts.length; k++) op.applyRange(x, pieces, cuts[k], cuts[k + 1]);
    expect(Array.from(pieces)).toEqual(Array.from(whole));
  });

  it('two threads give the one-thread product, pinned (real and complex) and stored', () => {
    for (const [seed, L, N] of [
      [71, 8, 3],
      [72, 7, 3],
    ]) {
      const { op, c, x, product: one, model, basis } = pinnedProduct(seed, L, N);
      const threaded = withThreads(op, 2, model, basis);
      const two = new Float64Array(c * op.dim);
      threaded.apply(x, two);
      threaded.apply(x, two); // a second product reuses the same workers
      threaded.close();
      expect(Array.from(two)).toEqual(Array.from(one));
    }
    // A random sparse Hermitian matrix in compressed rows.
    const n = 3000;
    const r = rng(5);
    const rows: Map<number, [number, number]>[] = Array.from({ length: n }, () => new Map());
    for (let k = 0; k < 20 * n; k++) {
      const i = Math.floor(r() * n);
      const j = Math.floor(r() * n);
      const re = r() - 0.5;
      const im = i === j ? 0 : r() - 0.5;
      rows[i].set(j, [re, im]);
      rows[j].set(i, [re, -im]);
    }
    const builder = new CsrBuilder(n, true);
    for (const row of rows) {
      for (const [j, [re, im]] of row) builder.add(j, re, im);
      builder.endRow();
    }
    const csr = builder.finish();
    const x = randomVector(2 * n, 9);
    const one = new Float64Array(2 * n);
    csr.apply(x, one);
    const threaded = withThreads(csr, 2);
    const two = new Float64Array(2 * n);
    threaded.apply(x, two);
    threaded.close();
    expect(Array.from(two)).toEqual(Array.from(one));
  });

  it("vectors kept in the threads' arena are multiplied in place, with the same bits", () => {
    // pinned: the threads' own arena
    const { op, c, x, product: one, model, basis } = pinnedProduct(73, 8, 3);
    const threaded = withThreads(op, 2, model, basis) as ReturnType<typeof withThreads> & { arena: VectorArena | null };
    expect(threaded.arena).not.toBeNull();
    const xa = threaded.arena!.vector(c * op.dim);
    const ya = threaded.arena!.vector(c * op.dim);
    xa.set(x);
    threaded.apply(xa, ya);
    threaded.close();
    expect(Array.from(ya)).toEqual(Array.from(one));
    // stored: the arena the matrix was built in
    const n = 2500;
    const r = rng(17);
    const arena = VectorArena.create()!;
    const builder = new CsrBuilder(n, false);
    for (let i = 0; i < n; i++) {
      builder.add(i, r() - 0.5);
      builder.add((i + 1) % n, 0.3);
      builder.add((i + n - 1) % n, 0.3);
      builder.endRow();
    }
    const csr = builder.finish(arena);
    const v = randomVector(n, 4);
    const plainProduct = new Float64Array(n);
    csr.apply(v, plainProduct);
    const threadedCsr = withThreads(csr, 2) as ReturnType<typeof withThreads> & { arena: VectorArena | null };
    expect(threadedCsr.arena).toBe(arena);
    const va = arena.vector(n);
    const wa = arena.vector(n);
    va.set(v);
    threadedCsr.apply(va, wa);
    threadedCsr.apply(va, wa);
    threadedCsr.close();
    expect(Array.from(wa)).toEqual(Array.from(plainProduct));
  });

  it('a kept team of product helpers serves operator after operator, with the one-thread bits', () => {
    const team = ProductTeam.start(2);
    expect(team).not.toBeNull();
    try {
      // A stored matrix in an arena (as sectors are built), a complex one in plain shared memory,
      // a pinned operator, then the first again: each rebinding must replace the last entirely.
      const arena = VectorArena.create()!;
      const stored = (n: number, isComplex: boolean, seed: number, into: VectorArena | null) => {
        const r = rng(seed);
        const builder = new CsrBuilder(n, isComplex);
        for (let i = 0; i < n; i++) {
          builder.add(i, r() - 0.5);
          builder.add((i + 7) % n, 0.3, isComplex ? r() - 0.5 : 0);
          builder.add((i + n - 7) % n, 0.3, isComplex ? r() - 0.5 : 0);
          builder.endRow();
        }
        return builder.finish(into ?? undefined);
      };
      const first = stored(2600, false, 31, arena);
      const pinned = pinnedProduct(74, 7, 3);
      const operators: {
        op: Parameters<typeof withThreads>[0];
        model?: typeof pinned.model;
        basis?: typeof pinned.basis;
      }[] = [
        { op: first },
        { op: stored(1900, true, 32, null) },
        { op: pinned.op, model: pinned.model, basis: pinned.basis },
        { op: first },
      ];
      for (const [k, { op, model, basis }] of operators.entries()) {
        const length = (op.isComplex ? 2 : 1) * op.dim;
        const x = randomVector(length, 40 + k);
        const one = new Float64Array(length);
        op.apply(x, one);
        const threaded = withThreads(op, 2, model, basis, team);
        const two = new Float64Array(length);
        threaded.apply(x, two);
        threaded.apply(x, two);
        expect(team!.bound).toBe(threaded);
        threaded.close();
        expect(team!.bound).toBeNull();
        expect(Array.from(two)).toEqual(Array.from(one));
        // Its helpers will serve the next operator: a closed one must not use them.
        expect(() => threaded.apply(x, two)).toThrow(/after it was closed/);
      }
    } finally {
      team?.close();
    }
  });

  it('a threaded solve gives the one-thread energies', async () => {
    const { solvePoint } = await import('../../src/point/solvePoint.js');
    const raw = clean({
      ...randomPinnedSpec(81, 8, 3),
      solve: { states: 3, tolerance: 1e-10, symmetries: 'none', threads: 2 },
    });
    const one = solvePoint(validateSpec(raw), { threads: 1 }).record;
    const two = solvePoint(validateSpec(raw)).record;
    two.energies.forEach((e, k) => expect(e).toBeCloseTo(one.energies[k], 10));
  });
});
