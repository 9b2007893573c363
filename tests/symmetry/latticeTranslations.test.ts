// Lattice translations Z_Lx x Z_Ly (issue 19): the momentum sectors [mx, my] of periodic 2D lattices
// against the full space. The union of the sector spectra (each sector's matrix made dense and
// diagonalized by ml-matrix) must be the full-space spectrum of the plain dense build of
// docs/model.md (tests/support/occupationReference.ts with the lattice couplings of
// tests/support/latticeReference.ts, sharing no code with src/); the sector dimensions counted by
// src/symmetry/sectorSizes.ts must be those of the sectors really built and sum to the full
// dimension. Sectors exist for pinned molecules only (the one kind the sector code supports).
import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { buildBasis, type PinnedBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import {
  detectSymmetries,
  latticeTranslations,
  planSectors,
  type SectorLabel,
  type SymmetryName,
} from '../../src/symmetry/group.js';
import { OrbitMap, SectorBasis } from '../../src/symmetry/sectorBasis.js';
import { buildSectorOperator } from '../../src/symmetry/sectorOperator.js';
import { sectorSizes } from '../../src/symmetry/sectorSizes.js';
import { describeCase, type LatticeRaw } from '../support/latticeReference.js';
import { buildDense } from '../support/occupationReference.js';
import { rng } from '../support/random.js';
import { denseSpectrum } from '../support/reference.js';

const NAMES: SymmetryName[] = ['translation', 'reflection', 'level_flip', 'charge'];

function randomSpec(id: number, lattice: LatticeRaw, N: number, flavour: 'generic' | 'charge' | 'flip') {
  const r = rng(4400 + id);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const links = N - 1;
  // "charge": no tunnelling (the total level is conserved); "flip": N = 2, equal detunings, moments
  // -a, +a and real tunnelling, which n -> 1 - n leaves unchanged (docs/model.md terms).
  const a = u(0.2, 1);
  return {
    lattice,
    levels: {
      count: N,
      tunnelling: Array.from({ length: links }, () => (flavour === 'charge' ? 0 : u(0.2, 1.2))),
      phase: Array.from({ length: links }, () => (flavour === 'generic' ? u(-Math.PI, Math.PI) : 0)),
      detuning: Array.from({ length: N }, () => (flavour === 'generic' ? u(-0.8, 0.8) : 0)),
    },
    exchange: { strength: u(-1.5, 1.5), range: r() < 0.5 ? 'dipolar' : 'nearest' },
    ising: {
      strength: u(-1, 1),
      moments: flavour === 'flip' ? [-a, a] : Array.from({ length: N }, () => u(-1, 1)),
      range: r() < 0.5 ? 'dipolar' : 'nearest',
    },
    solve: { states: 2 },
  };
}

/** A sector's matrix as a dense Hermitian matrix, column by column through the operator. */
function denseSector(op: { dim: number; isComplex: boolean; apply(x: Float64Array, y: Float64Array): void }) {
  const n = op.dim;
  const re = Matrix.zeros(n, n);
  const im = Matrix.zeros(n, n);
  const w = op.isComplex ? 2 : 1;
  for (let c = 0; c < n; c++) {
    const x = new Float64Array(w * n);
    const y = new Float64Array(w * n);
    x[w * c] = 1;
    op.apply(x, y);
    for (let r = 0; r < n; r++) {
      re.set(r, c, y[w * r]);
      if (op.isComplex) im.set(r, c, y[w * r + 1]);
    }
  }
  return { dim: n, re, im };
}

function fullSpectrum(raw: Record<string, any>): number[] {
  const h = buildDense(describeCase(raw, 'pinned'));
  const re = Matrix.zeros(h.dim, h.dim);
  const im = Matrix.zeros(h.dim, h.dim);
  for (let r = 0; r < h.dim; r++)
    for (let c = 0; c < h.dim; c++) {
      re.set(r, c, h.re[r * h.dim + c]);
      if (!h.real) im.set(r, c, h.im[r * h.dim + c]);
    }
  return denseSpectrum({ dim: h.dim, re, im });
}

/** Every sector of `use` (copies built too, not assumed), its spectrum and dimension. */
function sectorSpectra(raw: Record<string, any>, use: Record<SymmetryName, boolean>) {
  const model = buildModel(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>));
  const basis = buildBasis(model) as PinnedBasis;
  const lattice = latticeTranslations(model.geometry);
  if (typeof lattice === 'string') throw new Error(lattice);
  const group = { translation: use.translation, reflection: false, levelFlip: use.level_flip && !use.charge };
  const orbits = new OrbitMap(basis, group, undefined, false, lattice);
  const values: number[] = [];
  const dims = new Map<string, number>();
  const labels: SectorLabel[] = [];
  for (const plan of planSectors(use, model)) {
    for (const label of [plan.label, ...plan.copies]) {
      const sector = new SectorBasis(orbits, label);
      labels.push(label);
      dims.set(JSON.stringify(label), sector.dim);
      if (sector.dim === 0) continue;
      values.push(...denseSpectrum(denseSector(buildSectorOperator(model, basis, sector))));
    }
  }
  const counted = sectorSizes(model, use);
  return { model, basis, values: values.sort((a, b) => a - b), dims, labels, counted };
}

const CASES: { name: string; lattice: LatticeRaw; N: number }[] = [
  // A periodic direction needs at least 3 sites ([lattice] refuses fewer).
  {
    name: 'square 2x3 periodic along y, 3 levels',
    lattice: { shape: 'square', size: [2, 3], boundary: ['open', 'periodic'] },
    N: 3,
  },
  {
    name: 'square 3x2 periodic along x, 2 levels',
    lattice: { shape: 'square', size: [3, 2], boundary: ['periodic', 'open'] },
    N: 2,
  },
  {
    name: 'square 3x3 periodic both ways, 2 levels',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'] },
    N: 2,
  },
  {
    name: 'ladder of 3 rungs periodic along x, 2 levels',
    lattice: { shape: 'ladder', size: [3], boundary: ['periodic', 'open'] },
    N: 2,
  },
  {
    name: 'ladder of 3 rungs periodic along x, 3 levels',
    lattice: { shape: 'ladder', size: [3], boundary: ['periodic', 'open'] },
    N: 3,
  },
  {
    name: 'triangular 3x3 periodic both ways, 2 levels',
    lattice: { shape: 'triangular', size: [3, 3], boundary: ['periodic', 'periodic'] },
    N: 2,
  },
];
// Tilted fields: the couplings depend on the separation only (minimum image), so every translation
// still maps each pair to a pair with the same coupling (the commutation check confirms it).
const FIELDS = [
  [0, 0, 1],
  [0.3, -0.5, 0.8],
  [1, 1, 1],
];

describe('union of the momentum sectors = full-space spectrum (dense, ml-matrix)', () => {
  const rows = CASES.flatMap((c, i) =>
    (['generic', 'charge', 'flip'] as const)
      .filter((f) => f !== 'flip' || c.N === 2)
      .map((flavour, k) => [`${c.name}, ${flavour}`, i, k, c, flavour] as const),
  );
  it.each(rows)('%s', (_, i, k, c, flavour) => {
    const lattice = { ...c.lattice, field: FIELDS[(i + k) % FIELDS.length], spacing: [1, 1.1] };
    const raw = randomSpec(10 * i + k, lattice, c.N, flavour);
    const model = buildModel(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>));
    const basis = buildBasis(model) as PinnedBasis;
    const checks = detectSymmetries(model, basis);
    const present = Object.fromEntries(NAMES.map((n) => [n, checks.find((x) => x.name === n)!.present])) as Record<
      SymmetryName,
      boolean
    >;
    expect(present.translation).toBe(true);
    expect(present.reflection).toBe(false);
    if (flavour === 'charge') expect(present.charge).toBe(true);
    if (flavour === 'flip') expect(present.level_flip).toBe(true);
    const full = fullSpectrum(raw);
    // every subset of the detected symmetries that contains the translations
    const uses: Record<SymmetryName, boolean>[] = [
      {
        translation: true,
        reflection: false,
        level_flip: false,
        charge: false,
        point_group: false,
        automorphism: false,
      },
      {
        translation: true,
        reflection: false,
        level_flip: false,
        charge: present.charge,
        point_group: false,
        automorphism: false,
      },
      {
        translation: true,
        reflection: false,
        level_flip: present.level_flip,
        charge: false,
        point_group: false,
        automorphism: false,
      },
    ];
    for (const use of uses) {
      const s = sectorSpectra(raw, use);
      expect(s.values.length).toBe(full.length);
      const scale = Math.max(1, Math.abs(full[0]), Math.abs(full[full.length - 1]));
      s.values.forEach((v, n) => expect(Math.abs(v - full[n])).toBeLessThan(1e-9 * scale));
      // counted dimensions: those built, and (copies included) the full dimension in total
      let total = 0;
      for (const size of s.counted) {
        expect(size.dimension).toBe(s.dims.get(JSON.stringify(size.label)));
        total += size.dimension * (1 + size.copies);
      }
      expect(total).toBe(basis.dim);
    }
  });
});

describe('translations are refused where they do not hold', () => {
  it('a vacancy breaks them; an open lattice has none', () => {
    const base = { levels: { count: 2, tunnelling: 0.4 }, exchange: { strength: 1 } };
    const check = (lattice: Record<string, unknown>) => {
      const model = buildModel(validateSpec({ ...base, lattice }));
      return detectSymmetries(model, buildBasis(model) as PinnedBasis).find((c) => c.name === 'translation')!;
    };
    const vacancy = check({ shape: 'square', size: [3, 3], boundary: 'periodic', vacancies: [1] });
    expect(vacancy.present).toBe(false);
    expect(vacancy.detail).toMatch(/vacancy/);
    expect(check({ shape: 'square', size: [3, 2] }).present).toBe(false);
    expect(check({ shape: 'square', size: [3, 3], boundary: 'periodic', field: [0.2, 0.4, 0.9] }).present).toBe(true);
  });
});

describe('the 4x4 periodic square lattice, Heisenberg antiferromagnet, in momentum sectors', () => {
  // Mapping of tests/point/lattice.test.ts: 2 levels, exchange 1/2, diagonal term 1 with moments
  // -1/2, +1/2 give H = sum_<ij> S_i . S_j. E0 = -11.228483 (E0/N = -0.701780): published exact
  // diagonalization of the 16-site square lattice, e.g. Schulz, Ziman and Poilblanc, J. Phys. I
  // France 6, 675 (1996) (value from memory of that literature). The ground state is a singlet at
  // k = (0, 0) on the 4x4 lattice (Marshall 1955 sign rule; from memory).
  it('ground state at momentum [0, 0] and charge 8, E0 = -11.228483', () => {
    const { record } = solvePoint(
      validateSpec({
        lattice: { shape: 'square', size: [4, 4], boundary: 'periodic' },
        levels: { count: 2, tunnelling: 0 },
        exchange: { strength: 0.5 },
        ising: { strength: 1, moments: [-0.5, 0.5] },
        solve: { states: 1 },
      }),
    );
    expect(record.basis.dimension).toBe(65536);
    expect(record.sectors?.[0].momentum).toEqual([0, 0]);
    expect(record.sectors?.[0].k).toEqual([0, 0]);
    expect(record.sectors?.[0].charge).toBe(8);
    expect(record.energies[0]).toBeCloseTo(-11.228483, 6);
  });

  it('solve.sector.momentum = [0, 0] picks that sector; [1, 0] lies above', () => {
    const solveAt = (momentum: number[]) =>
      solvePoint(
        validateSpec({
          lattice: { shape: 'square', size: [4, 4], boundary: 'periodic' },
          levels: { count: 2, tunnelling: 0 },
          exchange: { strength: 0.5 },
          ising: { strength: 1, moments: [-0.5, 0.5] },
          solve: { states: 1, sector: { momentum, charge: 8 } },
        }),
      ).record;
    const zero = solveAt([0, 0]);
    expect(zero.energies[0]).toBeCloseTo(-11.228483, 6);
    expect(solveAt([1, 0]).energies[0]).toBeGreaterThan(zero.energies[0] + 0.1);
  });

  it('a momentum with the wrong number of entries or out of range is an error naming the key', () => {
    const run = (momentum: unknown) => () =>
      solvePoint(
        validateSpec({
          lattice: { shape: 'square', size: [3, 3], boundary: 'periodic' },
          levels: { count: 2, tunnelling: 0 },
          exchange: { strength: 0.5 },
          solve: { states: 1, sector: { momentum } },
        }),
      );
    expect(run([1, 3])).toThrow(/solve\.sector\.momentum\[0\]\[1\]/);
    expect(run([[0, 0, 0]])).toThrow(/solve\.sector\.momentum\[0\]/);
  });
});
