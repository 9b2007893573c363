import { describe, expect, it } from 'vitest';
import { buildBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { PinnedOperator } from '../../src/operator/pinned.js';
import { columnBuffer, PinnedColumns } from '../../src/operator/pinnedRows.js';
import { VectorArena } from '../../src/simd/arena.js';
import { validateSpec } from '../../src/spec/spec.js';
import { densePinnedHamiltonian } from '../support/reference.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';
import { ofKind } from '../support/narrow.js';

// The on-the-fly kernel against a plain element-by-element dense build of docs/model.md's Hamiltonian
// (tests/support/reference.ts, assembled with ml-matrix): the products must agree to rounding.
describe('pinned operator', () => {
  const cases: [number, number, number][] = [
    [1, 1, 5],
    [2, 2, 3],
    [3, 3, 3],
    [4, 4, 2],
    [5, 3, 4],
    [6, 5, 2],
    [7, 4, 3],
  ];
  for (const [seed, L, N] of cases) {
    it(`matches the dense reference product (seed ${seed}, L=${L}, N=${N})`, () => {
      const spec = validateSpec(clean(randomPinnedSpec(seed, L, N)));
      const model = buildModel(spec);
      const basis = ofKind(buildBasis(model), 'pinned');
      const op = new PinnedOperator(model, basis);
      const ref = densePinnedHamiltonian(spec);
      const dim = basis.dim;
      const c = op.isComplex ? 2 : 1;
      const r = rng(100 + seed);
      const x = Float64Array.from({ length: c * dim }, () => r() - 0.5);
      const y = new Float64Array(c * dim);
      op.apply(x, y);
      let worst = 0;
      let scale = 0;
      for (let row = 0; row < dim; row++) {
        let yr = 0;
        let yi = 0;
        for (let col = 0; col < dim; col++) {
          const hr = ref.re.get(row, col);
          const hi = ref.im.get(row, col);
          const xr = x[c * col];
          const xi = c === 2 ? x[c * col + 1] : 0;
          yr += hr * xr - hi * xi;
          yi += hr * xi + hi * xr;
        }
        worst = Math.max(worst, Math.abs(yr - y[c * row]), Math.abs(yi - (c === 2 ? y[c * row + 1] : 0)));
        scale = Math.max(scale, Math.abs(yr), Math.abs(yi));
      }
      expect(worst).toBeLessThan(1e-13 * Math.max(1, scale));
    });
  }

  it('is real exactly when no Peierls phase survives', () => {
    const spec = validateSpec({ chain: { sites: 3 }, levels: { count: 3, phase: [0, Math.PI] } });
    expect(buildModel(spec).isComplex).toBe(false);
    const twisted = validateSpec({ chain: { sites: 3 }, levels: { count: 3, phase: [0, 0.3] } });
    expect(buildModel(twisted).isComplex).toBe(true);
  });

  it('counts the nonzeros a stored matrix would hold', () => {
    const spec = validateSpec(clean(randomPinnedSpec(11, 4, 3)));
    const model = buildModel(spec);
    const basis = ofKind(buildBasis(model), 'pinned');
    const op = new PinnedOperator(model, basis);
    const ref = densePinnedHamiltonian(spec);
    let nz = 0;
    for (let r = 0; r < basis.dim; r++)
      for (let c = 0; c < basis.dim; c++) if (ref.re.get(r, c) !== 0 || ref.im.get(r, c) !== 0) nz++;
    expect(op.nonzeros()).toBe(nz);
  });
});

// Above the cached low-site block (N^blockSites states), terms run as long strided runs; those
// go to the SIMD kernel when x and y live in an arena. Checked against the column-by-column
// matrix elements (src/operator/pinnedRows.ts, an independent enumeration of docs/model.md's terms)
// to rounding, and against the plain loops bit for bit (the same multiply and add per entry).
describe('pinned operator beyond the cached block', () => {
  it.each([
    [81, 8, 3, false],
    [82, 7, 4, false],
    [83, 8, 3, true],
    [84, 6, 5, true],
  ])('seed %i, L=%i, N=%i, real %s: SIMD runs = plain loops, and both = the column enumeration', (seed, L, N, real) => {
    const raw = randomPinnedSpec(seed, L, N);
    if (real) raw.levels.phase = raw.levels.phase.map(() => 0);
    const spec = validateSpec(clean(raw));
    const model = buildModel(spec);
    const basis = ofKind(buildBasis(model), 'pinned');
    const op = new PinnedOperator(model, basis);
    expect(op.isComplex).toBe(!real);
    const c = op.isComplex ? 2 : 1;
    const length = c * op.dim;
    const r = rng(seed);
    const x = Float64Array.from({ length }, () => r() - 0.5);
    const plain = new Float64Array(length);
    op.apply(x, plain);
    const arena = VectorArena.create();
    if (!arena) throw new Error('this runtime cannot instantiate the SIMD kernels (Node 20 can)');
    const xa = arena.vector(length);
    const ya = arena.vector(length);
    xa.set(x);
    op.apply(xa, ya);
    expect(Array.from(ya)).toEqual(Array.from(plain));

    const columns = new PinnedColumns(model, basis);
    const buffer = columnBuffer(model);
    const expected = new Float64Array(length);
    let scale = 0;
    for (let s = 0; s < op.dim; s++) {
      columns.of(s, buffer);
      const xr = x[c * s];
      const xi = c === 2 ? x[c * s + 1] : 0;
      for (let k = 0; k < buffer.count; k++) {
        const t = buffer.targets[k];
        expected[c * t] += buffer.re[k] * xr - buffer.im[k] * xi;
        if (c === 2) expected[c * t + 1] += buffer.re[k] * xi + buffer.im[k] * xr;
        scale = Math.max(scale, Math.abs(buffer.re[k]) + Math.abs(buffer.im[k]));
      }
    }
    let worst = 0;
    for (let t = 0; t < length; t++) worst = Math.max(worst, Math.abs(plain[t] - expected[t]));
    expect(worst).toBeLessThan(1e-12 * Math.max(1, scale));
  });
});
