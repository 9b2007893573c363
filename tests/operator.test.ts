import { describe, expect, it } from 'vitest';
import { buildBasis } from '../src/basis.js';
import { buildModel } from '../src/model.js';
import { PinnedOperator } from '../src/operator/pinned.js';
import { validateSpec } from '../src/spec.js';
import { densePinnedHamiltonian } from './support/reference.js';
import { clean, randomPinnedSpec, rng } from './support/random.js';

// The on-the-fly kernel against a plain element-by-element dense build of MODEL.md's Hamiltonian
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
      const basis = buildBasis(model);
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
    const basis = buildBasis(model);
    const op = new PinnedOperator(model, basis);
    const ref = densePinnedHamiltonian(spec);
    let nz = 0;
    for (let r = 0; r < basis.dim; r++)
      for (let c = 0; c < basis.dim; c++) if (ref.re.get(r, c) !== 0 || ref.im.get(r, c) !== 0) nz++;
    expect(op.nonzeros()).toBe(nz);
  });
});
