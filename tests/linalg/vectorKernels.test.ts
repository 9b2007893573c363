import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { BLOCK, plainKernels, VectorKernels } from '../../src/linalg/vectorKernels.js';
import { VectorArena } from '../../src/simd/arena.js';
import { rng } from '../support/random.js';
import { compiledVectorKernels, generatedSource, GENERATED_PATH } from '../support/wat.mjs';

// The SIMD kernels compute textbook sums (dot products, linear combinations); the reference is the
// same sum written out term by term in plain JavaScript (common practice, no source needed).
// Results agree to rounding: the kernels add in a different order (two lanes per register).

function fill(v: Float64Array, seed: number): Float64Array {
  const r = rng(seed);
  for (let i = 0; i < v.length; i++) v[i] = r() - 0.5;
  return v;
}

/**
 * <a, w> written out (real, or sum conj(a) w over interleaved complex entries), with the rounding
 * allowance of a sum taken in another order: a modest multiple of eps * sum |a_t w_t| (the
 * worst-case bound, length * eps * sum |a_t w_t|, is far looser; Higham, Accuracy and Stability
 * of Numerical Algorithms, 2nd ed., sec. 3.1).
 */
function naiveDot(a: Float64Array, w: Float64Array, isComplex: boolean): [number, number, number] {
  let absSum = 0;
  for (let t = 0; t < w.length; t++)
    absSum += Math.abs(a[t]) * (isComplex ? Math.abs(w[t]) + Math.abs(w[t ^ 1]) : Math.abs(w[t]));
  const allowance = 64 * Number.EPSILON * absSum;
  if (!isComplex) {
    let s = 0;
    for (let t = 0; t < w.length; t++) s += a[t] * w[t];
    return [s, 0, allowance];
  }
  let re = 0;
  let im = 0;
  for (let t = 0; t < w.length; t += 2) {
    re += a[t] * w[t] + a[t + 1] * w[t + 1];
    im += a[t] * w[t + 1] - a[t + 1] * w[t];
  }
  return [re, im, allowance];
}

function arenaOrSkip(): VectorArena {
  const arena = VectorArena.create();
  if (!arena) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
  return arena;
}

describe('shipped WebAssembly matches its source', () => {
  it('src/simd/vectorWasm.ts is vector.wat compiled by wabt (run `npm run wasm` after editing the .wat)', async () => {
    const expected = generatedSource(await compiledVectorKernels());
    expect(fs.readFileSync(GENERATED_PATH, 'utf8')).toBe(expected);
  });
});

describe('SIMD kernels against written-out sums', () => {
  // Odd lengths exercise the zero padding; counts 1..9 exercise groups of four (two for complex)
  // and the single-vector tail; lengths above BLOCK exercise the blocked sweeps.
  const cases: Array<{ length: number; count: number; isComplex: boolean }> = [];
  for (const isComplex of [false, true]) {
    for (const count of [1, 2, 3, 4, 5, 7, 9]) {
      cases.push({ length: isComplex ? 2 * 301 : 301, count, isComplex });
      cases.push({ length: isComplex ? 2 * (BLOCK + 37) : 2 * BLOCK + 37, count, isComplex });
    }
  }

  it.each(cases)(
    'project, subtract with fused dots, norm: length $length, $count vectors, complex $isComplex',
    ({ length, count, isComplex }) => {
      const arena = arenaOrSkip();
      const kernels = new VectorKernels(arena);
      const set = Array.from({ length: count }, (_, i) => fill(arena.vector(length), 10 + i));
      const w = fill(arena.vector(length), 99);
      const w0 = Float64Array.from(w);
      const coef = arena.vector(2 * count);
      const next = arena.vector(2 * count);
      kernels.project(w, set, count, isComplex, coef);
      for (let i = 0; i < count; i++) {
        const [re, im, allowance] = naiveDot(set[i], w0, isComplex);
        expect(Math.abs(coef[isComplex ? 2 * i : i] - re)).toBeLessThan(allowance);
        if (isComplex) expect(Math.abs(coef[2 * i + 1] - im)).toBeLessThan(allowance);
      }
      const normSquared = kernels.subtract(w, set, count, isComplex, coef, next);
      // w0 - sum_i c_i a_i written out, with complex c_i a_i = (cr ar - ci ai, cr ai + ci ar)
      // (the allowance per entry: a few eps times the sum of the magnitudes of its terms)
      const expected = Float64Array.from(w0);
      const magnitude = w0.map(Math.abs);
      for (let i = 0; i < count; i++) {
        const a = set[i];
        if (isComplex) {
          const cr = coef[2 * i];
          const ci = coef[2 * i + 1];
          for (let t = 0; t < length; t += 2) {
            expected[t] -= cr * a[t] - ci * a[t + 1];
            expected[t + 1] -= cr * a[t + 1] + ci * a[t];
            magnitude[t] += Math.abs(cr * a[t]) + Math.abs(ci * a[t + 1]);
            magnitude[t + 1] += Math.abs(cr * a[t + 1]) + Math.abs(ci * a[t]);
          }
        } else {
          for (let t = 0; t < length; t++) {
            expected[t] -= coef[i] * a[t];
            magnitude[t] += Math.abs(coef[i] * a[t]);
          }
        }
      }
      let expectedNormSquared = 0;
      for (let t = 0; t < length; t++) {
        expect(Math.abs(w[t] - expected[t])).toBeLessThanOrEqual(8 * Number.EPSILON * magnitude[t]);
        expectedNormSquared += expected[t] * expected[t];
      }
      expect(Math.abs(normSquared - expectedNormSquared)).toBeLessThan(1e-12 * expectedNormSquared);
      expect(Math.abs(kernels.norm2(w) - Math.sqrt(expectedNormSquared))).toBeLessThan(
        1e-12 * Math.sqrt(expectedNormSquared),
      );
      // The fused dot products are those of the updated w (whatever its rounding).
      for (let i = 0; i < count; i++) {
        const [re, im, allowance] = naiveDot(set[i], w, isComplex);
        expect(Math.abs(next[isComplex ? 2 * i : i] - re)).toBeLessThan(allowance);
        if (isComplex) expect(Math.abs(next[2 * i + 1] - im)).toBeLessThan(allowance);
      }
    },
  );

  it.each([
    { length: 301, size: 9, keep: 5 },
    { length: 2 * BLOCK + 37, size: 24, keep: 14 },
    { length: 2 * BLOCK + 38, size: 3, keep: 3 },
  ])('restart combination in place: length $length, $size vectors into $keep', ({ length, size, keep }) => {
    const arena = arenaOrSkip();
    const kernels = new VectorKernels(arena);
    const basis = Array.from({ length: size }, (_, i) => fill(arena.vector(length), 50 + i));
    const original = basis.map((v) => Float64Array.from(v));
    const y = fill(arena.vector(size * size), 7);
    const scratch = arena.vector(BLOCK * size);
    kernels.combine(basis, size, y, size, keep, scratch);
    let maxDiff = 0;
    for (let c = 0; c < keep; c++) {
      for (let t = 0; t < length; t++) {
        let s = 0;
        for (let i = 0; i < size; i++) s += y[i * size + c] * original[i][t];
        maxDiff = Math.max(maxDiff, Math.abs(basis[c][t] - s));
      }
    }
    expect(maxDiff).toBeLessThan(1e-13);
    // Vectors past `keep` are left alone.
    for (let c = keep; c < size; c++) expect(basis[c]).toEqual(original[c]);
  });

  it('the padding entry of an odd-length vector stays zero through the kernels', () => {
    const arena = arenaOrSkip();
    const kernels = new VectorKernels(arena);
    const length = 257;
    const set = [fill(arena.vector(length), 1), fill(arena.vector(length), 2)];
    const w = fill(arena.vector(length), 3);
    const coef = arena.vector(2);
    kernels.project(w, set, 2, false, coef);
    kernels.subtract(w, set, 2, false, coef, null);
    const padding = new Float64Array(w.buffer, w.byteOffset + 8 * length, 1);
    expect(padding[0]).toBe(0);
  });

  it("scaling in the arena gives the plain loop's bits, odd lengths and the padding included", () => {
    const arena = arenaOrSkip();
    const kernels = new VectorKernels(arena);
    for (const length of [1, 2, 257, 4096]) {
      const v = fill(arena.vector(length), 7 + length);
      const expected = Float64Array.from(v);
      for (let i = 0; i < length; i++) expected[i] *= 1 / 3.7;
      kernels.scale(v, 1 / 3.7);
      expect(Array.from(v)).toEqual(Array.from(expected));
      expect(new Float64Array(v.buffer, v.byteOffset + 8 * length, 1)[0]).toBe(0);
      const outside = fill(new Float64Array(length), 7 + length);
      kernels.scale(outside, 1 / 3.7);
      expect(Array.from(outside)).toEqual(Array.from(expected));
    }
  });

  it("y += h x in the arena gives the plain loop's bits", () => {
    const arena = arenaOrSkip();
    const kernels = new VectorKernels(arena);
    for (const length of [1, 2, 257, 4096]) {
      const x = fill(arena.vector(length), 11 + length);
      const y = fill(arena.vector(length), 12 + length);
      const expected = Float64Array.from(y);
      for (let i = 0; i < length; i++) expected[i] -= 0.37 * x[i];
      kernels.axpy(y, x, -0.37);
      expect(Array.from(y)).toEqual(Array.from(expected));
      const outside = fill(new Float64Array(length), 12 + length);
      kernels.axpy(outside, Float64Array.from(x), -0.37);
      expect(Array.from(outside)).toEqual(Array.from(expected));
    }
  });

  it('vectors outside the arena take the plain loops, with the same result', () => {
    const arena = arenaOrSkip();
    const kernels = new VectorKernels(arena);
    const length = 1001;
    const inside = [fill(arena.vector(length), 4), fill(arena.vector(length), 5)];
    const outside = [fill(new Float64Array(length), 4), fill(new Float64Array(length), 5)];
    expect(arena.ownsAll(inside, 2)).toBe(true);
    expect(arena.owns(outside[0])).toBe(false);
    const w = fill(arena.vector(length), 6);
    const coefInside = arena.vector(2);
    const coefOutside = new Float64Array(2);
    kernels.project(w, inside, 2, false, coefInside);
    kernels.project(w, outside, 2, false, coefOutside);
    const plain = new Float64Array(2);
    plainKernels.project(Float64Array.from(w), outside, 2, false, plain);
    expect(coefOutside).toEqual(plain);
    for (let i = 0; i < 2; i++) expect(Math.abs(coefInside[i] - plain[i])).toBeLessThan(1e-12);
  });

  it('the arena grows past its first page and keeps earlier vectors intact', () => {
    const arena = arenaOrSkip();
    const first = fill(arena.vector(100), 8);
    const copy = Float64Array.from(first);
    const big = arena.vector(1 << 20);
    expect(arena.owns(big)).toBe(true);
    expect(arena.owns(first)).toBe(true);
    expect(first).toEqual(copy);
  });
});
