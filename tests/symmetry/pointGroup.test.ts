// Point-group operations of lattices and automorphisms of custom arrays as symmetry sectors
// (issue 19). The union of the sector spectra (each sector's matrix made dense and diagonalized by
// ml-matrix) must be the full-space spectrum of the plain dense build of docs/model.md
// (tests/support/occupationReference.ts with the lattice couplings of
// tests/support/latticeReference.ts, sharing no code with src/); the counted sector dimensions
// must be those built and sum to the full dimension; the observables of a sector solve must be
// those of the dense ground-space mixture. Sectors exist for pinned molecules only.
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
  pointGroupOf,
  type SectorLabel,
  type SymmetryName,
} from '../../src/symmetry/group.js';
import {
  AUTOMORPHISM_CAP,
  chooseAutomorphisms,
  couplingAutomorphisms,
  groupElements,
  permutationOrder,
} from '../../src/symmetry/pointGroup.js';
import { OrbitMap, SectorBasis } from '../../src/symmetry/sectorBasis.js';
import { buildSectorOperator } from '../../src/symmetry/sectorOperator.js';
import { sectorSizes } from '../../src/symmetry/sectorSizes.js';
import { describeCase } from '../support/latticeReference.js';
import { buildDense, groundMixture, observablesFrom } from '../support/occupationReference.js';
import { rng } from '../support/random.js';
import { denseSpectrum } from '../support/reference.js';

type Flavour = 'generic' | 'charge' | 'flip';

function randomSpec(id: number, lattice: Record<string, unknown>, N: number, flavour: Flavour) {
  const r = rng(7100 + id);
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
    exchange: { strength: u(-1.5, 1.5), range: r() < 0.6 ? 'dipolar' : 'nearest' },
    ising: {
      strength: u(-1, 1),
      moments: flavour === 'flip' ? [-a, a] : Array.from({ length: N }, () => u(-1, 1)),
      range: r() < 0.6 ? 'dipolar' : 'nearest',
    },
    solve: { states: 3, tolerance: 1e-11 },
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

/** The spec as the dense reference reads it: a cubic lattice is given as its custom positions (open). */
function referenceSpec(raw: Record<string, any>): Record<string, any> {
  const l = raw.lattice as Record<string, any>;
  if (!(l.shape === 'square' && Array.isArray(l.size) && l.size.length === 3)) return raw;
  const [X, Y, Z] = l.size as number[];
  const positions: number[][] = [];
  for (let z = 0; z < Z; z++) for (let y = 0; y < Y; y++) for (let x = 0; x < X; x++) positions.push([x, y, z]);
  return { ...raw, lattice: { shape: 'custom', positions, field: l.field } };
}

function fullSpectrum(raw: Record<string, any>): number[] {
  const h = buildDense(describeCase(referenceSpec(raw), 'pinned'));
  const re = Matrix.zeros(h.dim, h.dim);
  const im = Matrix.zeros(h.dim, h.dim);
  for (let r = 0; r < h.dim; r++)
    for (let c = 0; c < h.dim; c++) {
      re.set(r, c, h.re[r * h.dim + c]);
      if (!h.real) im.set(r, c, h.im[r * h.dim + c]);
    }
  return denseSpectrum({ dim: h.dim, re, im });
}

const NONE: Record<SymmetryName, boolean> = {
  translation: false,
  reflection: false,
  level_flip: false,
  charge: false,
  point_group: false,
  automorphism: false,
};

/** Every sector of `use` (copies built too, not assumed), each in the orbit map of its own group. */
function sectorSpectra(raw: Record<string, any>, use: Record<SymmetryName, boolean>) {
  const model = buildModel(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>));
  const basis = buildBasis(model) as PinnedBasis;
  const t = latticeTranslations(model.geometry);
  const lattice = typeof t === 'string' ? null : t;
  const group = pointGroupOf(model);
  if (typeof group === 'string') throw new Error(group);
  const maps = new Map<string, OrbitMap>();
  const mapFor = (label: SectorLabel) => {
    const names = Object.keys(label.point_group ?? {});
    const key = `${label.momentum !== null}${label.level_flip !== null}${names.join('+')}`;
    let m = maps.get(key);
    if (!m) {
      const gens = names.map((n) => group.names.indexOf(n));
      const orders = gens.map((g) => group.orders[g]);
      const point =
        names.length > 0
          ? {
              names,
              orders,
              elements: groupElements(
                gens.map((g) => group.generators[g]),
                orders,
                model.sites,
              ),
            }
          : null;
      const g = { translation: label.momentum !== null, reflection: false, levelFlip: label.level_flip !== null };
      m = new OrbitMap(basis, g, undefined, false, lattice, point);
      maps.set(key, m);
    }
    return m;
  };
  const values: number[] = [];
  const dims = new Map<string, number>();
  for (const plan of planSectors(use, model)) {
    for (const label of [plan.label, ...plan.copies]) {
      const sector = new SectorBasis(mapFor(label), label);
      dims.set(JSON.stringify(label), sector.dim);
      if (sector.dim === 0) continue;
      values.push(...denseSpectrum(denseSector(buildSectorOperator(model, basis, sector))));
    }
  }
  return { model, basis, group, values: values.sort((a, b) => a - b), dims, counted: sectorSizes(model, use) };
}

interface Case {
  name: string;
  lattice: Record<string, unknown>;
  N: number;
  /** Generators the check must keep (point_group or automorphism names with their orders). */
  expect?: { kind: 'point_group' | 'automorphism'; names?: string[]; orders?: number[] };
}

const ring = (n: number) =>
  Array.from({ length: n }, (_, k) => {
    // radius 1 / (2 sin(pi/n)): neighbours one spacing apart
    const R = 1 / (2 * Math.sin(Math.PI / n));
    return [R * Math.cos((2 * Math.PI * k) / n), R * Math.sin((2 * Math.PI * k) / n)];
  });

const CASES: Case[] = [
  {
    name: 'square 3x3 periodic, field along z',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'] },
    N: 2,
    expect: { kind: 'point_group', names: ['x', 'y'] },
  },
  {
    name: 'square 3x3 periodic, field tilted in the xz plane (keeps x, y; kills the diagonals)',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'], field: [1, 0, 1] },
    N: 2,
    expect: { kind: 'point_group', names: ['x', 'y'] },
  },
  {
    name: 'square 3x3 open, field along [1, 1, 0.5]',
    lattice: { shape: 'square', size: [3, 3], field: [1, 1, 0.5] },
    N: 2,
    expect: { kind: 'point_group' },
  },
  {
    name: 'square 3x2 open, generic field (only the in-plane rotation by pi)',
    lattice: { shape: 'square', size: [3, 2], field: [0.3, -0.5, 0.8] },
    N: 2,
    expect: { kind: 'point_group', names: ['C2'] },
  },
  {
    name: 'square 2x3 periodic along y',
    lattice: { shape: 'square', size: [2, 3], boundary: ['open', 'periodic'], field: [0, 0.6, 1] },
    N: 2,
    expect: { kind: 'point_group' },
  },
  {
    name: 'ladder of 3 rungs periodic along x',
    lattice: { shape: 'ladder', size: [3], boundary: ['periodic', 'open'] },
    N: 2,
    expect: { kind: 'point_group', names: ['x', 'y'] },
  },
  {
    name: 'triangular 3x3 periodic',
    lattice: { shape: 'triangular', size: [3, 3], boundary: ['periodic', 'periodic'] },
    N: 2,
    expect: { kind: 'point_group' },
  },
  {
    name: 'triangular 2x3 open, tilted field',
    lattice: { shape: 'triangular', size: [2, 3], field: [0.4, 0.1, 1] },
    N: 2,
    expect: { kind: 'point_group', names: ['C2'] },
  },
  {
    name: 'cubic 2x2x2 open',
    lattice: { shape: 'square', size: [2, 2, 2] },
    N: 2,
    expect: { kind: 'point_group', names: ['x', 'y', 'z'] },
  },
  {
    name: 'square 3x3 open with the centre vacant (automorphisms)',
    lattice: { shape: 'square', size: [3, 3], vacancies: [4] },
    N: 2,
    expect: { kind: 'automorphism' },
  },
  {
    name: 'square 3x3 periodic with a corner vacant (automorphisms)',
    lattice: { shape: 'square', size: [3, 3], boundary: ['periodic', 'periodic'], vacancies: [0] },
    N: 2,
    expect: { kind: 'automorphism' },
  },
  {
    name: 'tweezer ring of 6 (custom positions): its rotations',
    lattice: { shape: 'custom', positions: ring(6) },
    N: 2,
    expect: { kind: 'automorphism', orders: [6] },
  },
  {
    name: 'tweezer ring of 5, tilted field',
    lattice: { shape: 'custom', positions: ring(5), field: [0.5, 0, 1] },
    N: 3,
    expect: { kind: 'automorphism' },
  },
  {
    name: 'a T of 5 sites cut from a square lattice, as custom positions',
    lattice: {
      shape: 'custom',
      positions: [
        [0, 0],
        [1, 0],
        [2, 0],
        [1, 1],
        [1, 2],
      ],
    },
    N: 3,
    expect: { kind: 'automorphism' },
  },
];

describe('union of the point-group sectors = full-space spectrum (dense, ml-matrix)', () => {
  const rows = CASES.flatMap((c, i) =>
    (['generic', 'charge', 'flip'] as const)
      .filter((f) => f !== 'flip' || c.N === 2)
      .map((flavour, k) => [`${c.name}, ${flavour}`, i, k, c, flavour] as const),
  );
  it.each(rows)('%s', (_, i, k, c, flavour) => {
    const raw = randomSpec(10 * i + k, c.lattice, c.N, flavour);
    const model = buildModel(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>));
    const basis = buildBasis(model) as PinnedBasis;
    const checks = detectSymmetries(model, basis);
    const present = Object.fromEntries(checks.map((x) => [x.name, x.present])) as Record<SymmetryName, boolean>;
    const kind = c.expect!.kind;
    expect(present[kind], checks.find((x) => x.name === kind)!.detail).toBe(true);
    const group = pointGroupOf(model);
    if (typeof group === 'string') throw new Error(group);
    if (c.expect?.names) expect(group.names).toEqual(c.expect.names);
    if (c.expect?.orders) expect(group.orders).toEqual(c.expect.orders);
    const full = fullSpectrum(raw);
    const uses: Record<SymmetryName, boolean>[] = [
      { ...NONE, [kind]: true },
      { ...NONE, [kind]: true, translation: present.translation },
      { ...NONE, [kind]: true, translation: present.translation, charge: present.charge },
      { ...NONE, [kind]: true, translation: present.translation, level_flip: present.level_flip },
    ];
    for (const use of uses) {
      const s = sectorSpectra(raw, use);
      expect(s.values.length).toBe(full.length);
      const scale = Math.max(1, Math.abs(full[0]), Math.abs(full[full.length - 1]));
      s.values.forEach((v, n) => expect(Math.abs(v - full[n])).toBeLessThan(1e-9 * scale));
      let total = 0;
      for (const size of s.counted) {
        expect(size.dimension).toBe(s.dims.get(JSON.stringify(size.label)));
        total += size.dimension * (1 + size.copies);
      }
      expect(total).toBe(basis.dim);
    }
  });
});

function maxDiff(a: unknown, b: unknown): number {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b);
  if (a === null && b === null) return 0;
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return Infinity;
    return a.reduce((m: number, x, k) => Math.max(m, maxDiff(x, b[k])), 0);
  }
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    const ka = Object.keys(a).sort();
    const kb = Object.keys(b).sort();
    if (ka.join() !== kb.join()) return Infinity;
    return ka.reduce(
      (m, key) => Math.max(m, maxDiff((a as Record<string, unknown>)[key], (b as Record<string, unknown>)[key])),
      0,
    );
  }
  return a === b ? 0 : Infinity;
}

describe('a sector solve through the point group gives the dense ground-space mixture', () => {
  // Degenerate cases: the flip flavour with no detuning and the symmetric lattices give degenerate
  // levels across sectors (a k, -k pair; characters of a rotation and their conjugates).
  const rows = CASES.flatMap((c, i) =>
    (['generic', 'charge', 'flip'] as const)
      .filter((f) => f !== 'flip' || c.N === 2)
      .map((flavour, k) => [`${c.name}, ${flavour}`, i, k, c, flavour] as const),
  );
  it.each(rows)('%s', (_, i, k, c, flavour) => {
    const raw = randomSpec(500 + 10 * i + k, c.lattice, c.N, flavour);
    const reference = describeCase(referenceSpec(raw), 'pinned');
    const h = buildDense(reference);
    const tolerance = 1e-11;
    const g = groundMixture(h, tolerance);
    const solved = solvePoint(validateSpec(JSON.parse(JSON.stringify(raw)) as Record<string, unknown>)).record;
    expect(solved.solver.symmetries).toContain(c.expect!.kind);
    const wanted = Math.min(3, h.dim);
    expect(maxDiff(solved.energies, g.values.slice(0, wanted))).toBeLessThan(1e-8 * Math.max(1, Math.abs(g.values[0])));
    expect(solved.solver.degeneracy).toBe(g.degeneracy);
    const D = h.dim;
    const p = new Float64Array(D);
    for (let s = 0; s < D; s++) p[s] = g.projectorRe[s * D + s] / g.degeneracy;
    const ref = observablesFrom(reference, h.configs, p);
    const got = solved.observables as unknown as Record<string, unknown>;
    const above = g.values[g.degeneracy] ?? Infinity;
    const tol = 1e-8 + (100 * tolerance * reference.levels ** 2) / Math.max(above - g.values[0], 1e-6);
    for (const name of ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'] as const)
      expect(maxDiff(got[name], ref[name]), name).toBeLessThanOrEqual(tol);
    // every observable equals the whole-space solve's (symmetries "none")
    const whole = solvePoint(
      validateSpec({ ...JSON.parse(JSON.stringify(raw)), solve: { ...raw.solve, symmetries: 'none' } }),
    ).record;
    const wholeObs = whole.observables as unknown as Record<string, unknown>;
    for (const name of Object.keys(wholeObs)) {
      if (name === 'entanglement') continue; // cuts by position are off a chain; none asked
      expect(maxDiff(got[name], wholeObs[name]), name).toBeLessThanOrEqual(tol);
    }
  });
});

describe('the 4x4 periodic square lattice, Heisenberg antiferromagnet, through translations and point group', () => {
  // Mapping of tests/point/lattice.test.ts: 2 levels, exchange 1/2, diagonal term 1 with moments
  // -1/2, +1/2 give H = sum_<ij> S_i . S_j. E0 = -11.228483 (E0/N = -0.701780): published exact
  // diagonalization of the 16-site square lattice, e.g. Schulz, Ziman and Poilblanc, J. Phys. I
  // France 6, 675 (1996) (value from memory of that literature). Momentum (0, 0): Marshall's sign
  // rule (Marshall 1955). The mirror characters are derived here from the whole-space ground state
  // (symmetries "none"): <psi|M|psi> for the mirrors x -> 3 - x and y -> 3 - y.
  const HEISENBERG = {
    lattice: { shape: 'square', size: [4, 4], boundary: 'periodic' },
    levels: { count: 2, tunnelling: 0 },
    exchange: { strength: 0.5 },
    ising: { strength: 1, moments: [-0.5, 0.5] },
  };
  const spec = (symmetries: unknown) => validateSpec({ ...HEISENBERG, solve: { states: 1, symmetries } });
  it('ground state at momentum [0, 0], charge 8 and the mirror characters of the dense ground state', () => {
    const { record } = solvePoint(spec('auto'));
    expect(record.solver.symmetries).toContain('point_group');
    expect(record.energies[0]).toBeCloseTo(-11.228483, 6);
    const label = record.sectors![0];
    expect(label.momentum).toEqual([0, 0]);
    expect(label.charge).toBe(8);
    const whole = solvePoint(spec('none'), { groundStates: true });
    expect(whole.record.energies[0]).toBeCloseTo(-11.228483, 6);
    const psi = whole.groundStates[0];
    const complex = psi.length === 2 * 65536;
    const mirrorCharacter = (image: (x: number, y: number) => [number, number]) => {
      let overlap = 0;
      for (let s = 0; s < 65536; s++) {
        // site x + 4 y holds bit x + 4 y of s (mixed radix, site 0 fastest); the level moves to the image site
        let t = 0;
        for (let site = 0; site < 16; site++) {
          if (!((s >> site) & 1)) continue;
          const [x, y] = image(site % 4, Math.floor(site / 4));
          t |= 1 << (x + 4 * y);
        }
        overlap += complex ? psi[2 * t] * psi[2 * s] + psi[2 * t + 1] * psi[2 * s + 1] : psi[t] * psi[s];
      }
      return overlap;
    };
    const mx = mirrorCharacter((x, y) => [3 - x, y]);
    const my = mirrorCharacter((x, y) => [x, 3 - y]);
    expect(Math.abs(Math.abs(mx) - 1)).toBeLessThan(1e-6);
    expect(Math.abs(Math.abs(my) - 1)).toBeLessThan(1e-6);
    expect(label.point_group).toEqual({ x: Math.round(mx), y: Math.round(my) });
  });

  it('solve.sector.point_group selects; the other mirror characters lie above', () => {
    const at = (point_group: Record<string, number>) =>
      solvePoint(
        validateSpec({
          ...HEISENBERG,
          solve: { states: 1, sector: { momentum: [0, 0], charge: 8, point_group } },
        }),
      ).record.energies[0];
    const e0 = at({ x: 1, y: 1 });
    // the ground level's characters come from the dense ground state in the test above
    expect(e0).toBeCloseTo(-11.228483, 6);
    expect(at({ x: -1 })).toBeGreaterThan(e0 + 0.1);
  });
});

describe('the field decides which mirrors are kept (dipolar couplings, 3x3 open)', () => {
  // 1 - 3 cos^2 theta depends on (r.f)^2: the mirror x -> -x keeps it for every r exactly when
  // f_x f_y = 0 (and f in the plane's normal or an axis plane); the diagonal mirror x <-> y when
  // |f_x| = |f_y| (textbook dipole-dipole geometry).
  const groupFor = (field: number[]) => {
    const model = buildModel(
      validateSpec({
        lattice: { shape: 'square', size: [3, 3], field },
        levels: { count: 2, tunnelling: 0.4 },
        exchange: { strength: 1, range: 'dipolar' },
        ising: { strength: 0.3, moments: [0.2, -0.4], range: 'dipolar' },
      }),
    );
    const g = pointGroupOf(model);
    if (typeof g === 'string') throw new Error(g);
    return g;
  };
  it('field along [1, 0, 1]: x and y kept, the diagonals broken', () => {
    const g = groupFor([1, 0, 1]);
    expect(g.names).toEqual(['x', 'y']);
    expect(g.detail).toMatch(/broken: diagonal, antidiagonal, C4/);
  });
  it('field along [1, 1, 0.5]: the diagonals kept, x and y broken', () => {
    const g = groupFor([1, 1, 0.5]);
    expect(g.names).toEqual(['diagonal', 'antidiagonal']);
    expect(g.detail).toMatch(/broken: x, y, C4/);
  });
  it('field along z: the whole square group; a generic tilt keeps only the rotation by pi', () => {
    expect(groupFor([0, 0, 1]).detail).toMatch(/not used: diagonal, antidiagonal, C2, C4/);
    expect(groupFor([0.3, -0.5, 0.8]).names).toEqual(['C2']);
  });
});

const gcd = (a: number, b: number): number => (b === 0 ? a : gcd(b, a % b));

describe('automorphisms of the couplings', () => {
  const modelOf = (positions: number[][], field = [0, 0, 1]) =>
    buildModel(
      validateSpec({
        lattice: { shape: 'custom', positions, field },
        levels: { count: 2, tunnelling: 0.4 },
        exchange: { strength: 1, range: 'dipolar' },
        ising: { strength: 0.3, moments: [0.2, -0.4], range: 'dipolar' },
      }),
    );
  it('a ring of n (field normal to it) has the dihedral group of order 2n; the group used is its rotation', () => {
    // symmetries of a regular polygon: the dihedral group D_n, n rotations and n mirrors (common practice)
    for (const n of [5, 6, 8]) {
      const m = modelOf(ring(n));
      const { found, capped } = couplingAutomorphisms(m.sites, [m.exchangePairs, m.isingPairs]);
      expect(capped).toBe(false);
      expect(found.length).toBe(2 * n);
      // the rotations of order n are the generators of Z_n: Euler's phi(n) of them
      const phi = Array.from({ length: n }, (_, k) => k).filter((k) => gcd(k, n) === 1).length;
      expect(found.filter((g) => permutationOrder(g) === n).length).toBe(phi);
      const group = pointGroupOf(m);
      if (typeof group === 'string') throw new Error(group);
      expect(group.kind).toBe('automorphism');
      expect(group.orders).toEqual([n]);
    }
  });
  it('a field tilted in the ring plane leaves only a mirror (or two commuting ones)', () => {
    // the field along x keeps the mirrors y -> -y and x -> -x of a hexagon with a vertex on x (and their product)
    const m = modelOf(ring(6), [1, 0, 0.2]);
    const { found } = couplingAutomorphisms(m.sites, [m.exchangePairs, m.isingPairs]);
    expect(found.length).toBe(4);
    const group = pointGroupOf(m);
    if (typeof group === 'string') throw new Error(group);
    expect(group.orders.every((o) => o === 2)).toBe(true);
    expect(group.orders.reduce((a, b) => a * b, 1)).toBe(4);
  });
  it('uncoupled sites: every permutation preserves the couplings, and the search stops at its cap', () => {
    const empty = { count: 0, i: new Int32Array(0), j: new Int32Array(0), value: new Float64Array(0) };
    const { found, capped } = couplingAutomorphisms(9, [empty]);
    expect(capped).toBe(true);
    expect(found.length).toBe(AUTOMORPHISM_CAP);
    const group = chooseAutomorphisms(found, capped, () => true, 9);
    if (typeof group === 'string') throw new Error(group);
    expect(group.detail).toMatch(/capped/);
  });
});

describe('errors name the key', () => {
  const base = {
    levels: { count: 2, tunnelling: 0.4 },
    exchange: { strength: 1, range: 'dipolar' },
    solve: { states: 1 },
  };
  it('a point group that does not commute, a generator not in use, a bad value', () => {
    // the field along [1, 0, 1] kills the diagonal mirrors (detection decides)
    const lattice = { shape: 'square', size: [3, 3], field: [1, 0, 1] };
    const run =
      (solve: Record<string, unknown>, l: Record<string, unknown> = lattice) =>
      () =>
        solvePoint(validateSpec({ ...base, lattice: l, solve: { states: 1, ...solve } }));
    expect(run({ sector: { point_group: { diagonal: 1 } } })).toThrow(/solve\.sector\.point_group\.diagonal/);
    expect(run({ sector: { point_group: { x: 2 } } })).toThrow(/solve\.sector\.point_group\.x/);
    // a lattice asks for automorphism, an asymmetric custom array for anything
    expect(run({ symmetries: ['automorphism'] })).toThrow(/solve\.symmetries.*automorphism/);
    const odd = {
      shape: 'custom',
      positions: [
        [0, 0],
        [1, 0],
        [0, 1.7],
        [2.6, 0.4],
      ],
    };
    expect(run({ symmetries: ['automorphism'] }, odd)).toThrow(/solve\.symmetries.*automorphism/);
    expect(run({ symmetries: ['point_group'] }, { shape: 'square', size: [3, 3], vacancies: [0, 1] })).toThrow(
      /solve\.symmetries.*point_group/,
    );
    // chains keep their reflection
    expect(() =>
      solvePoint(validateSpec({ ...base, chain: { sites: 4 }, solve: { states: 1, symmetries: ['point_group'] } })),
    ).toThrow(/solve\.symmetries.*point_group/);
    expect(() =>
      validateSpec({ ...base, chain: { sites: 4 }, solve: { sector: { point_group: { x: 0.5 } } } }),
    ).toThrow(/solve\.sector\.point_group\.x/);
  });
});
