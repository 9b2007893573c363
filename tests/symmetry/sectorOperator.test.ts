import { describe, expect, it } from 'vitest';
import { buildBasis, type PinnedBasis } from '../../src/basis/basis.js';
import { OrbitMap, SectorBasis } from '../../src/symmetry/sectorBasis.js';
import { buildModel } from '../../src/model/model.js';
import { CsrBuilder } from '../../src/operator/csr.js';
import { buildSectorOperator, buildSectorRows } from '../../src/symmetry/sectorOperator.js';
import { validateSpec } from '../../src/spec/spec.js';
import { clean, randomPinnedSpec } from '../support/random.js';

// A sector matrix whose rows are built in two parts (as two threads do) must equal the one built
// in a single pass, entry for entry (a property of the build; no outside source needed).
describe('sector matrix built in two parts', () => {
  it.each([
    [
      0,
      'k = 0, parity +1',
      { momentum: 0, parity: 1 as const, level_flip: null, charge: null },
      { translation: true, reflection: true, levelFlip: false },
    ],
    [
      1,
      'k = 2 pi / 7 (complex)',
      { momentum: 1, parity: null, level_flip: null, charge: null },
      { translation: true, reflection: false, levelFlip: false },
    ],
  ])('%i: %s', (_, __, label, group) => {
    const spec = validateSpec(clean({ ...randomPinnedSpec(91, 7, 3), chain: { sites: 7, boundary: 'periodic' } }));
    const model = buildModel(spec);
    const basis = buildBasis(model) as PinnedBasis;
    const sector = new SectorBasis(new OrbitMap(basis, group), label);
    const whole = buildSectorOperator(model, basis, sector);
    const from = Math.floor(sector.dim / 3);
    const split = buildSectorOperator(model, basis, sector, null, null, {
      from,
      start: () => {},
      take: () => {
        const other = new CsrBuilder(sector.dim - from, whole.isComplex);
        buildSectorRows(model, basis, sector, from, sector.dim, other);
        return other.export();
      },
    });
    expect(Array.from(split.rowStart)).toEqual(Array.from(whole.rowStart));
    expect(Array.from(split.columns)).toEqual(Array.from(whole.columns));
    expect(Array.from(split.valuesRe)).toEqual(Array.from(whole.valuesRe));
    expect(split.valuesIm === null ? null : Array.from(split.valuesIm)).toEqual(
      whole.valuesIm === null ? null : Array.from(whole.valuesIm),
    );
  });
});
