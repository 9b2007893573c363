import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { ChunkSpares, CsrBuilder } from '../../src/operator/csr.js';
import { VectorArena } from '../../src/simd/arena.js';
import { rng } from '../support/random.js';

// A stored matrix built in an arena runs its product in WebAssembly; it must give the plain loop's
// bits (same multiply-adds in the same order) and the dense product (ml-matrix) to rounding.
describe('stored matrices in an arena', () => {
  it.each([false, true])('random sparse Hermitian matrix, complex %s', (isComplex) => {
    const n = 700;
    const r = rng(isComplex ? 12 : 11);
    const re = new Matrix(n, n);
    const im = new Matrix(n, n);
    for (let i = 0; i < n; i++) {
      re.set(i, i, r() - 0.5);
      for (let e = 0; e < 6; e++) {
        const j = Math.floor(r() * n);
        if (j === i) continue;
        const a = r() - 0.5;
        const b = isComplex ? r() - 0.5 : 0;
        re.set(i, j, re.get(i, j) + a);
        re.set(j, i, re.get(j, i) + a);
        im.set(i, j, im.get(i, j) + b);
        im.set(j, i, im.get(j, i) - b);
      }
    }
    const build = () => {
      const builder = new CsrBuilder(n, isComplex);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++)
          if (re.get(i, j) !== 0 || im.get(i, j) !== 0) builder.add(j, re.get(i, j), im.get(i, j));
        builder.endRow();
      }
      return builder;
    };
    const arena = VectorArena.create();
    if (!arena) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
    const plain = build().finish();
    const inArena = build().finish(arena);
    expect(arena.owns(inArena.valuesRe)).toBe(true);
    expect(inArena.arena).toBe(arena);
    const c = isComplex ? 2 : 1;
    const x = arena.vector(c * n);
    for (let k = 0; k < x.length; k++) x[k] = r() - 0.5;
    const yPlain = new Float64Array(c * n);
    const yArena = arena.vector(c * n);
    plain.apply(Float64Array.from(x), yPlain);
    inArena.apply(x, yArena);
    expect(Array.from(yArena)).toEqual(Array.from(yPlain));
    let worst = 0;
    for (let i = 0; i < n; i++) {
      let sr = 0;
      let si = 0;
      for (let j = 0; j < n; j++) {
        const xr = x[c * j];
        const xi = isComplex ? x[c * j + 1] : 0;
        sr += re.get(i, j) * xr - im.get(i, j) * xi;
        si += re.get(i, j) * xi + im.get(i, j) * xr;
      }
      worst = Math.max(worst, Math.abs(sr - yArena[c * i]), isComplex ? Math.abs(si - yArena[c * i + 1]) : 0);
    }
    expect(worst).toBeLessThan(1e-13);
  });
});

describe('arena marks', () => {
  it('release hands back what was allocated after the mark, bumps the epoch, and reused vectors start at zero', () => {
    const arena = VectorArena.create();
    if (!arena) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
    const kept = arena.vector(1000);
    const mark = arena.mark();
    const epoch = arena.epoch;
    const first = arena.vector(5000);
    arena.release(mark);
    expect(arena.epoch).toBe(epoch + 1);
    first.fill(Number.NaN);
    new Float64Array(first.buffer, first.byteOffset, 5001).fill(Number.NaN);
    const again = arena.vector(4999); // odd: its padding entry is summed by the kernels too
    expect(again.byteOffset).toBe(first.byteOffset);
    expect(new Float64Array(again.buffer, again.byteOffset, 5000).every((v) => v === 0)).toBe(true);
    expect(again.byteOffset).toBeGreaterThanOrEqual(kept.byteOffset + 8 * 1000);
  });
});

// Rows of every short length, an empty first row included: the kernels take a row's terms two at a
// time with a leftover one, so lengths 0..5 cover every path; the arena product must still equal
// the plain loop bit for bit.
describe('short and empty rows', () => {
  it.each([false, true])('complex %s', (isComplex) => {
    const n = 60;
    const r = rng(isComplex ? 31 : 30);
    const builder = new CsrBuilder(n, isComplex);
    const arena = VectorArena.create()!;
    const plainBuilder = new CsrBuilder(n, isComplex);
    for (let i = 0; i < n; i++) {
      for (let e = 0; e < (i * 7) % 6; e++) {
        const col = Math.floor(r() * n);
        const re = r() - 0.5;
        const im = isComplex ? r() - 0.5 : 0;
        builder.add(col, re, im);
        plainBuilder.add(col, re, im);
      }
      builder.endRow();
      plainBuilder.endRow();
    }
    const inArena = builder.finish(arena);
    const plain = plainBuilder.finish();
    expect(inArena.rowStart[1]).toBe(0); // the first row is empty
    const c = isComplex ? 2 : 1;
    const x = arena.vector(c * n);
    for (let k = 0; k < x.length; k++) x[k] = r() - 0.5;
    const y = arena.vector(c * n);
    y.fill(Number.NaN);
    inArena.apply(x, y);
    const yPlain = new Float64Array(c * n);
    plain.apply(Float64Array.from(x), yPlain);
    expect(Array.from(y)).toEqual(Array.from(yPlain));
    expect(y[0]).toBe(0);
  });
});

describe('building past one chunk', () => {
  it('a matrix of more than 2^20 entries is assembled in order, in an arena and in plain shared memory', () => {
    // A banded ring: row i holds i-2..i+2 with entries that name their position, so any chunk
    // out of place shows up in the product (written out directly below, in the product's order of
    // additions: terms 0, 2, 4 of a row in one sum, 1, 3 in another, then the two added).
    const n = 300_000;
    const value = (i: number, d: number) => 1 + ((i * 7 + d * 3) % 11) / 10;
    const build = () => {
      const b = new CsrBuilder(n, false);
      for (let i = 0; i < n; i++) {
        for (let d = -2; d <= 2; d++) b.add((i + d + n) % n, value(i, d));
        b.endRow();
      }
      return b;
    };
    const arena = VectorArena.create()!;
    for (const op of [build().finish(), build().finish(arena)]) {
      expect(op.nonzeros()).toBe(5 * n);
      const x = arena.vector(n);
      for (let i = 0; i < n; i++) x[i] = Math.sin(i);
      const y = arena.vector(n);
      op.apply(x, y);
      let worst = 0;
      for (let i = 0; i < n; i++) {
        const sums = [0, 0];
        for (let d = -2; d <= 2; d++) sums[(d + 2) % 2] += value(i, d) * x[(i + d + n) % n];
        worst = Math.max(worst, Math.abs(sums[0] + sums[1] - y[i]));
      }
      expect(worst).toBe(0);
    }
  });
});

describe('spare chunks', () => {
  // A sector-by-sector solve builds one matrix after another; each should start on the chunks the
  // last one handed back. A matrix of sector size that fits in less than a chunk used to grow its
  // chunk by doubling, and a grown chunk was never handed back, so no build reused one.
  it('a builder of sector size hands its chunk back though it fills only part of it, and the next one takes it', () => {
    const n = 1 << 15;
    const spares = new ChunkSpares();
    const build = (isComplex: boolean) => {
      const b = new CsrBuilder(n, isComplex, spares);
      for (let i = 0; i < n; i++) {
        b.add(i, 2, 0);
        b.add((i + 1) % n, -1, isComplex ? 0.5 : 0);
        b.add((i + n - 1) % n, -1, isComplex ? -0.5 : 0);
        b.endRow();
      }
      return b;
    };
    const first = build(false);
    const [int32, float64] = [spares.int32.length, spares.float64.length];
    const a = first.finish();
    expect([int32, float64]).toEqual([0, 0]);
    expect([spares.int32.length, spares.float64.length]).toEqual([1, 1]);
    const handedBack = spares.int32[0];
    const second = build(false);
    expect(spares.int32.length).toBe(0);
    const b = second.finish();
    expect(spares.int32[0]).toBe(handedBack);
    // The reused chunk held the first matrix's entries: the second must not show them.
    const x = new Float64Array(n).map((_, i) => Math.cos(i));
    const [ya, yb] = [new Float64Array(n), new Float64Array(n)];
    a.apply(x, ya);
    b.apply(x, yb);
    expect(Array.from(yb)).toEqual(Array.from(ya));
    // A complex matrix needs two value chunks: it takes the spare one and adds one of its own.
    build(true).finish();
    expect([spares.int32.length, spares.float64.length]).toEqual([1, 2]);
  });
});
