import { describe, expect, it } from 'vitest';
import { FockBasis } from '../../src/basis/fock.js';
import { buildModel } from '../../src/model/model.js';
import { buildFockOperator, planFockOperator } from '../../src/operator/fock.js';
import { lowestEigenpairs } from '../../src/solver/eigensolver.js';
import { validateSpec, type Spec } from '../../src/spec/spec.js';
import {
  denseFockHamiltonian,
  denseGround,
  key,
  randomItinerantSpec,
  type FockReference,
} from '../support/fockReference.js';
import { denseSpectrum } from '../support/reference.js';
import { VectorArena } from '../../src/simd/arena.js';

type Kind = 'hardcore' | 'boson' | 'fermion';

function build(spec: Spec) {
  const model = buildModel(spec);
  const basis = new FockBasis(model.kind as Kind, model.sites, model.levels, model.particleNumber, model.maxPerSite);
  return { model, basis, op: buildFockOperator(model, basis) };
}

/** Reference index of each of our basis states. */
function permutation(basis: FockBasis, ref: FockReference): number[] {
  const map: number[] = [];
  const occ = new Int32Array(basis.sites * basis.levels);
  const cursor = basis.cursor();
  do {
    basis.modeOccupations(cursor.state, occ);
    const r = ref.indexOf.get(key(Array.from(occ)));
    if (r === undefined) throw new Error('state missing from the reference');
    map.push(r);
  } while (cursor.next());
  return map;
}

// Cases: [seed, kind, sites, levels, particles, options]. Every term is on; periodic chains put the
// fermion string across the wrap-around bond; complex cases carry random Peierls phases.
const cases: [number, Kind, number, number, number, { periodic?: boolean; complex?: boolean; maxPerSite?: number }][] =
  [
    [1, 'hardcore', 4, 3, 2, { periodic: false }],
    [2, 'hardcore', 5, 2, 3, { periodic: true, complex: true }],
    [3, 'hardcore', 4, 4, 3, { periodic: true }],
    [4, 'fermion', 3, 2, 3, { periodic: true }],
    [5, 'fermion', 4, 2, 4, { periodic: true, complex: true }],
    [6, 'fermion', 3, 3, 4, { periodic: false }],
    [7, 'fermion', 5, 1, 2, { periodic: true }],
    [8, 'fermion', 4, 2, 3, { periodic: true }],
    [9, 'boson', 3, 2, 3, { periodic: true }],
    [10, 'boson', 4, 2, 3, { periodic: false, maxPerSite: 2, complex: true }],
    [11, 'boson', 3, 3, 4, { periodic: true, maxPerSite: 3 }],
    [12, 'boson', 5, 1, 4, { periodic: true }],
  ];

// The stored Fock-space matrix against the plain dense construction from second quantization in
// tests/support/fockReference.ts (element by element, with ml-matrix storage).
describe('Fock-space operator against the dense second-quantized reference', () => {
  for (const [seed, kind, L, N, Np, options] of cases) {
    it(`${kind} seed ${seed}: L=${L} N=${N} Np=${Np} ${options.periodic ? 'periodic' : 'open'}${options.complex ? ' complex' : ''}: every matrix element`, () => {
      const spec = validateSpec(randomItinerantSpec(seed, kind, L, N, Np, options));
      const { model, basis, op } = build(spec);
      const ref = denseFockHamiltonian(spec);
      expect(basis.dim).toBe(ref.dim);
      const map = permutation(basis, ref);
      const c = op.isComplex ? 2 : 1;
      const dim = basis.dim;
      // Column by column: H e_col against the reference column.
      const x = new Float64Array(c * dim);
      const y = new Float64Array(c * dim);
      let worst = 0;
      let refOffDiagonal = 0;
      let storedOffDiagonal = 0;
      for (let row = 0; row < dim; row++)
        for (let k = op.rowStart[row]; k < op.rowStart[row + 1]; k++) if (op.columns[k] !== row) storedOffDiagonal++;
      for (let col = 0; col < dim; col++) {
        x.fill(0);
        x[c * col] = 1;
        op.apply(x, y);
        for (let row = 0; row < dim; row++) {
          const hr = ref.re.get(map[row], map[col]);
          const hi = ref.im.get(map[row], map[col]);
          if (hr !== 0 || hi !== 0) refOffDiagonal += row === col ? 0 : 1;
          worst = Math.max(worst, Math.abs(y[c * row] - hr), Math.abs((c === 2 ? y[c * row + 1] : 0) - hi));
        }
      }
      expect(worst).toBeLessThan(1e-13);
      // Stored entries, counted in closed form before building: the reference's off-diagonal
      // nonzeros, plus one diagonal entry per row when any diagonal term is on.
      const plan = planFockOperator(model, dim);
      expect(plan.nonzeros).toBe(op.nonzeros());
      expect(storedOffDiagonal).toBe(refOffDiagonal);
      expect(op.nonzeros() - storedOffDiagonal).toBe(dim);
    });
  }
});

// Lanczos (src/solver/eigensolver.ts, dense path disabled) on our operator against ml-matrix's dense
// eigensolver on the reference matrix: the lowest eigenvalues must agree.
describe('Lanczos on Fock operators against ml-matrix dense eigenvalues', () => {
  const spectra: [
    number,
    Kind,
    number,
    number,
    number,
    { periodic?: boolean; complex?: boolean; maxPerSite?: number },
  ][] = [
    [31, 'hardcore', 5, 3, 3, { periodic: true }],
    [32, 'hardcore', 6, 2, 3, { periodic: false, complex: true }],
    [33, 'fermion', 4, 3, 3, { periodic: true }],
    [34, 'fermion', 5, 2, 4, { periodic: true, complex: true }],
    [35, 'boson', 4, 2, 4, { periodic: true, maxPerSite: 3 }],
    [36, 'boson', 5, 2, 3, { periodic: false, complex: true }],
  ];
  for (const [seed, kind, L, N, Np, options] of spectra) {
    it(`${kind} seed ${seed}: L=${L} N=${N} Np=${Np}`, () => {
      const spec = validateSpec(randomItinerantSpec(seed, kind, L, N, Np, options));
      const { op } = build(spec);
      const ref = denseFockHamiltonian(spec);
      // Real matrices straight to the symmetric solver; complex ones through the real embedding.
      const exact = options.complex ? denseSpectrum({ dim: ref.dim, re: ref.re, im: ref.im }) : denseGround(ref).values;
      const states = 4;
      const result = lowestEigenpairs(op, {
        states,
        tolerance: 1e-10,
        denseThreshold: 0,
        seed: 7,
        throwOnFailure: true,
      });
      expect(result.method).toBe('lanczos');
      for (let k = 0; k < states; k++) expect(result.values[k]).toBeCloseTo(exact[k], 9);
    });
  }
});

// Built in an arena, the same matrix multiplies in WebAssembly: the same multiply-adds in the
// same order as the plain loop, so the same bits (the dense checks above cover the plain loop).
describe('Fock operators built in an arena', () => {
  it.each(cases.filter((_, k) => k % 3 === 1))(
    'seed %i %s: arena product = plain product, bit for bit',
    (seed, kind, L, N, Np, options) => {
      const spec = validateSpec(randomItinerantSpec(seed, kind, L, N, Np, options));
      const { model, basis, op } = build(spec);
      const arena = VectorArena.create()!;
      const inArena = buildFockOperator(model, basis, arena);
      expect(inArena.arena).toBe(arena);
      const c = op.isComplex ? 2 : 1;
      const x = arena.vector(c * basis.dim);
      for (let k = 0; k < x.length; k++) x[k] = Math.sin(k + seed);
      const plain = new Float64Array(c * basis.dim);
      op.apply(Float64Array.from(x), plain);
      const y = arena.vector(c * basis.dim);
      inArena.apply(x, y);
      expect(Array.from(y)).toEqual(Array.from(plain));
    },
  );
});
