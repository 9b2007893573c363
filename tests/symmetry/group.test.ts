import { describe, expect, it } from 'vitest';
import { buildBasis } from '../../src/basis/basis.js';
import { buildModel } from '../../src/model/model.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { solveInSectors } from '../../src/symmetry/sectorSolve.js';
import { validateSpec } from '../../src/spec/spec.js';
import { detectSymmetries, type SymmetryName } from '../../src/symmetry/group.js';
import { densePinnedHamiltonian, denseSpectrum } from '../support/reference.js';
import { clean, randomPinnedSpec, rng } from '../support/random.js';
import { entanglementOf, ofKind } from '../support/narrow.js';

function usedFrom(spec: ReturnType<typeof validateSpec>) {
  const model = buildModel(spec);
  const basis = ofKind(buildBasis(model), 'pinned');
  const checks = detectSymmetries(model, basis);
  const used = Object.fromEntries(checks.map((c) => [c.name, c.present])) as Record<SymmetryName, boolean>;
  return { model, basis, used };
}

/** A spec whose couplings are mirror-symmetric in the level index, so n -> N-1-n is a symmetry. */
function flipSymmetricSpec(seed: number, L: number, N: number) {
  const r = rng(seed);
  const half = (n: number, f: () => number) => {
    const v = Array.from({ length: n }, () => 0);
    for (let k = 0; k < n; k++) v[k] = k < n - 1 - k ? f() : v[n - 1 - k];
    for (let k = 0; k < n; k++) if (k > n - 1 - k) v[k] = v[n - 1 - k];
    return v;
  };
  const moments = Array.from({ length: N }, (_, n) => n - (N - 1) / 2); // mu_{N-1-n} = -mu_n
  return {
    chain: { sites: L, boundary: 'periodic' },
    levels: { count: N, tunnelling: half(N - 1, () => 0.5 + r()), detuning: half(N, () => r() - 0.5) },
    exchange: { strength: 0.5 + 2 * r(), range: 'dipolar', weights: half(N - 1, () => 0.5 + r()) },
    ising: { strength: r() - 0.5, moments },
    solve: { states: N ** L, tolerance: 1e-10 },
  };
}

describe('symmetry detection', () => {
  it('finds translation and reflection on a periodic chain, and no charge while microwaves tunnel', () => {
    const { used } = usedFrom(validateSpec(clean(randomPinnedSpec(31, 5, 3))));
    expect(used.reflection).toBe(true);
    expect(used.charge).toBe(false);
  });

  it('rejects translation on an open chain and a level flip when the couplings are not mirror-symmetric', () => {
    const { used } = usedFrom(validateSpec({ chain: { sites: 5 }, levels: { count: 3, tunnelling: [1, 0.5] } }));
    expect(used.translation).toBe(false);
    expect(used.level_flip).toBe(false);
    expect(used.reflection).toBe(true);
  });

  it('finds the conserved total level without tunnelling, and the level flip of mirror-symmetric couplings', () => {
    const a = usedFrom(
      validateSpec({
        chain: { sites: 4, boundary: 'periodic' },
        levels: { count: 3, tunnelling: 0 },
        exchange: { strength: 1, weights: 'rotor' },
      }),
    );
    expect(a.used.charge).toBe(true);
    expect(a.used.translation).toBe(true);
    const b = usedFrom(validateSpec(clean(flipSymmetricSpec(5, 4, 4))));
    expect(b.used.level_flip).toBe(true);
  });

  it('rejects a level flip broken only by one exchange weight, seen in a few configurations only', () => {
    // Sampled states must meet the one pair of levels where the flip fails (common practice: a
    // symmetry commutes with H only if it does on every matrix element).
    const raw = clean(flipSymmetricSpec(7, 9, 5));
    raw.exchange.weights[3] *= 1.001;
    const { used } = usedFrom(validateSpec(raw));
    expect(used.level_flip).toBe(false);
    const intact = usedFrom(validateSpec(clean(flipSymmetricSpec(7, 9, 5))));
    expect(intact.used.level_flip).toBe(true);
  });

  it('off a chain: no translation or reflection (site i -> i+1 is no lattice symmetry), charge, level flip and point group found', () => {
    // A 3x2 open square of two-level molecules with exchange and a level-antisymmetric
    // diagonal term: the total level is conserved and n -> 1-n maps H to itself (common practice).
    const { used } = usedFrom(
      validateSpec({
        lattice: { shape: 'square', size: [3, 2] },
        levels: { count: 2, tunnelling: 0 },
        exchange: { strength: 1, range: 'dipolar' },
        ising: { strength: 0.4, moments: [-0.5, 0.5] },
      }),
    );
    // the lattice's own mirrors and rotations are the point group (tests/symmetry/pointGroup.test.ts)
    expect(used).toEqual({
      translation: false,
      reflection: false,
      charge: true,
      level_flip: true,
      point_group: true,
      automorphism: false,
    });
  });

  it('a symmetry named by the user that the model lacks is an error naming solve.symmetries', () => {
    const spec = validateSpec({ chain: { sites: 4 }, levels: { count: 3 }, solve: { symmetries: ['translation'] } });
    expect(() => solvePoint(spec)).toThrow(/solve\.symmetries/);
  });
});

// The union of all sector spectra must be the full spectrum: ml-matrix's dense eigensolver on a plain
// element-by-element build of the Hamiltonian (tests/support/reference.ts) is the reference.
describe('sector spectra against the full dense spectrum', () => {
  const cases: [string, () => Record<string, any>][] = [
    ['random complex, periodic L=5 N=3 (translation, reflection)', () => randomPinnedSpec(41, 5, 3)],
    ['random, periodic L=6 N=2', () => ({ ...randomPinnedSpec(42, 6, 2), chain: { sites: 6, boundary: 'periodic' } })],
    [
      'random, open L=5 N=3 (reflection)',
      () => ({ ...randomPinnedSpec(43, 5, 3), chain: { sites: 5, boundary: 'open' } }),
    ],
    [
      'no tunnelling, periodic L=6 N=3 (charge, translation, reflection)',
      () => ({
        ...randomPinnedSpec(44, 6, 3),
        levels: { count: 3, tunnelling: 0, detuning: [0.1, -0.3, 0.4] },
        chain: { sites: 6, boundary: 'periodic' },
      }),
    ],
    ['mirror-symmetric levels, periodic L=4 N=4 (level flip)', () => flipSymmetricSpec(45, 4, 4)],
    ['mirror-symmetric levels, periodic L=5 N=3', () => flipSymmetricSpec(46, 5, 3)],
  ];
  it.each(cases)('%s', (_, make) => {
    const raw = clean(make());
    const spec = validateSpec(raw);
    const { model, basis, used } = usedFrom(spec);
    const solution = solveInSectors(model, basis, used, { states: basis.dim, tolerance: 1e-10 });
    const reference = denseSpectrum(densePinnedHamiltonian(spec));
    expect(solution.energies).toHaveLength(basis.dim);
    solution.energies.forEach((e, k) => expect(Math.abs(e - reference[k])).toBeLessThan(1e-9));
  });
});

describe('sectors solved on two threads at once', () => {
  // The threads share only which sector comes next and the lowest energies found, so the answer
  // must be the one-thread answer (a property of the method; no outside source needed), and the
  // one-thread answer is itself checked against the dense spectrum above.
  const cases: [string, () => Record<string, any>][] = [
    ['random, periodic L=8 N=3', () => ({ ...randomPinnedSpec(61, 8, 3), chain: { sites: 8, boundary: 'periodic' } })],
    ['random, periodic L=9 N=2', () => ({ ...randomPinnedSpec(62, 9, 2), chain: { sites: 9, boundary: 'periodic' } })],
    ['random complex, periodic L=7 N=3', () => randomPinnedSpec(63, 7, 3)],
    ['mirror-symmetric levels, periodic L=7 N=3', () => ({ ...flipSymmetricSpec(64, 7, 3), solve: {} })],
  ];
  it.each(cases)(
    '%s: same energies, labels and ground-state probabilities as one thread, every sector run once',
    (_, make) => {
      const spec = validateSpec(clean(make()));
      const { model, basis, used } = usedFrom(spec);
      const options = { states: 4, tolerance: 1e-10 };
      const one = solveInSectors(model, basis, used, { ...options, sectorThreads: 1 });
      const two = solveInSectors(model, basis, used, { ...options, sectorThreads: 2 });
      two.energies.forEach((e, k) => expect(e).toBeCloseTo(one.energies[k], 9));
      expect(two.degeneracy).toBe(one.degeneracy);
      // Labels of non-degenerate levels must agree; within a degenerate level the order may differ.
      const key = (l: object) => JSON.stringify(l);
      expect(two.labels.map(key).sort()).toEqual(one.labels.map(key).sort());
      expect(two.runs.map((r) => key(r.label))).toEqual(one.runs.map((r) => key(r.label)));
      let worst = 0;
      two.groundProbabilities.forEach((p, t) => (worst = Math.max(worst, Math.abs(p - one.groundProbabilities[t]))));
      expect(worst).toBeLessThan(1e-8);
    },
  );
});

describe('large sectors built by two threads', () => {
  // Splitting the rows between two threads must give the same matrix, hence the same answer
  // (a property of the build; no outside source needed).
  it('a ring whose sectors are all split gives the answer of unsplit builds', () => {
    const spec = validateSpec(clean({ ...randomPinnedSpec(81, 8, 3), chain: { sites: 8, boundary: 'periodic' } }));
    const { model, basis, used } = usedFrom(spec);
    const options = { states: 3, tolerance: 1e-10, sectorThreads: 1 };
    const whole = solveInSectors(model, basis, used, { ...options, threadsFor: () => 1 });
    const split = solveInSectors(model, basis, used, { ...options, threadsFor: () => 2, splitBuildRows: 16 });
    split.energies.forEach((e, k) => expect(e).toBeCloseTo(whole.energies[k], 10));
    expect(split.runs.map((r) => r.dimension)).toEqual(whole.runs.map((r) => r.dimension));
  });
});

describe('states found one at a time within a sector', () => {
  // Once the lowest energies so far are known, a sector's states are found one by one, each
  // deflated against the ones before, until the next cannot enter the answer. The answer must be
  // the full-space one (the full-space solve is checked against ml-matrix's dense eigensolver in
  // tests/point/solvePoint.test.ts), with residuals measured against H itself.
  it.each([71, 72, 73])('random periodic L=9 N=3, seed %i: the 5 lowest states equal the full-space solve', (seed) => {
    const raw = clean({
      ...randomPinnedSpec(seed, 9, 3),
      chain: { sites: 9, boundary: 'periodic' },
      solve: { states: 5, tolerance: 1e-10, entanglement: 'none' },
    });
    const inSectors = solvePoint(validateSpec(raw)).record;
    const full = solvePoint(validateSpec({ ...raw, solve: { ...raw.solve, symmetries: 'none' } })).record;
    inSectors.energies.forEach((e, k) => expect(e).toBeCloseTo(full.energies[k], 9));
    expect(inSectors.solver.converged).toBe(true);
    inSectors.solver.residuals.forEach((r) => expect(r).toBeLessThanOrEqual(1e-10));
  });
});

describe('degenerate levels found one at a time within a sector', () => {
  // Nine free two-level systems (tunnelling only, open chain): each site has levels -t and +t, so
  // E = -9t + 2t (number of sites excited), and the first excited level is 9-fold (closed form,
  // common practice). The sectors of reflection and level flip split it 5 + 4, so the 4 lowest
  // states need three copies from one or two sectors, found one after another with deflation.
  it('nine free two-level sites: -9t, then -7t three times', () => {
    const t = 1.25;
    const raw = {
      chain: { sites: 9 },
      levels: { count: 2, tunnelling: t },
      solve: { states: 4, tolerance: 1e-10, entanglement: 'none' },
    };
    const r = solvePoint(validateSpec(raw)).record;
    expect(r.solver.symmetries).toEqual(expect.arrayContaining(['reflection', 'level_flip']));
    expect(r.energies).toHaveLength(4);
    [-9 * t, -7 * t, -7 * t, -7 * t].forEach((e, k) => expect(r.energies[k]).toBeCloseTo(e, 9));
  });
});

// Small chains a random differential test (full space against sectors against a dense build)
// found wrong: a sector's screen hid its lowest state, and the full space's verification pass
// missed a copy of a degenerate level, both when Lanczos met a level just above the line before
// one just below it. Reference: the dense spectrum (ml-matrix) of the plain dense build.
describe('screens and verification against the dense spectrum', () => {
  const lowestDense = (raw: Record<string, any>, count: number) =>
    denseSpectrum(densePinnedHamiltonian(validateSpec(raw))).slice(0, count);
  it('a ring of levels with a weak dipolar exchange: the parity -1 sector is not screened out above its lowest state', () => {
    const raw = {
      chain: { sites: 6 },
      levels: { count: 3, boundary: 'ring', tunnelling: [0.6, 1.4, 1.0] },
      exchange: { strength: 0.2, range: 'dipolar' },
      solve: { states: 2, tolerance: 1e-10, entanglement: 'none' },
    };
    const r = solvePoint(validateSpec(raw)).record;
    expect(r.solver.symmetries).toContain('reflection');
    lowestDense(raw, 2).forEach((e, k) => expect(r.energies[k]).toBeCloseTo(e, 8));
  });

  it('three sites of six levels in the full space: the verification pass finds the second copy of the ground level', () => {
    const raw = {
      chain: { sites: 3, boundary: 'periodic' },
      levels: {
        count: 6,
        boundary: 'ring',
        tunnelling: [2, 1, 0, 0, 1, 2],
        phase: Math.PI,
        detuning: [0.5, 2, -1, -1, 2, 0.5],
      },
      exchange: { strength: 2, weights: [2, 0.5, 0.5, 0, 2] },
      solve: { states: 3, tolerance: 1e-10, symmetries: 'none', entanglement: 'none' },
    };
    const reference = lowestDense(raw, 3);
    expect(reference[1] - reference[0]).toBeLessThan(1e-9);
    const r = solvePoint(validateSpec(raw)).record;
    expect(r.solver.method).toBe('lanczos');
    reference.forEach((e, k) => expect(r.energies[k]).toBeCloseTo(e, 8));
    expect(r.solver.degeneracy).toBe(2);
  });
});

describe('sector solves through solvePoint', () => {
  // Reference: the full-space solve, itself checked against ml-matrix's dense eigensolver on a
  // plain dense build (tests/point/solvePoint.test.ts); a symmetry-adapted basis must not change physics
  // (common practice).
  it('observables and energies agree with the full-space solve', () => {
    const raw = clean({
      ...randomPinnedSpec(51, 7, 3),
      chain: { sites: 7, boundary: 'periodic' },
      solve: { states: 3, tolerance: 1e-10 },
    });
    const inSectors = solvePoint(validateSpec(raw)).record;
    const full = solvePoint(validateSpec({ ...raw, solve: { ...raw.solve, symmetries: 'none' } })).record;
    expect(inSectors.sectors).toHaveLength(3);
    inSectors.energies.forEach((e, k) => expect(e).toBeCloseTo(full.energies[k], 9));
    if (full.solver.degeneracy === inSectors.solver.degeneracy) {
      inSectors.observables.populations.forEach((row, i) =>
        row.forEach((p, n) => expect(p).toBeCloseTo(full.observables.populations[i][n], 7)),
      );
      expect(inSectors.observables.string_width).toBeCloseTo(full.observables.string_width, 7);
      inSectors.observables.pair_separation.forEach((row, i) =>
        row.forEach((p, j) => expect(p).toBeCloseTo(full.observables.pair_separation[i][j], 7)),
      );
    }
  });

  // A complex H (a Peierls phase) pairs k with -k through the reflection, not conjugation: the
  // ground space of a degenerate +-k pair must hold both momentum states, as the full space's does.
  it('a complex H with a degenerate +-k ground pair: entanglement as in the full space', () => {
    const raw = {
      chain: { sites: 5, boundary: 'periodic' },
      levels: { count: 2, phase: 0.3 },
      exchange: { strength: 1 },
      solve: { states: 3, tolerance: 1e-10, entanglement: 'half' },
    };
    const inSectors = solvePoint(validateSpec(raw)).record;
    const full = solvePoint(validateSpec({ ...raw, solve: { ...raw.solve, symmetries: 'none' } })).record;
    expect(inSectors.solver.degeneracy).toBe(2);
    expect(full.solver.degeneracy).toBe(2);
    expect(new Set(inSectors.sectors!.slice(0, 2).map((l) => l.momentum))).toEqual(new Set([1, 4]));
    const [a, b] = [entanglementOf(inSectors.observables)[0], entanglementOf(full.observables)[0]];
    expect(a.von_neumann).toBeCloseTo(b.von_neumann, 8);
    expect(a.renyi_2).toBeCloseTo(b.renyi_2, 8);
    a.spectrum.forEach((x, k) => expect(x).toBeCloseTo(b.spectrum[k], 7));
  });

  it('a warm start from the full-space ground state is projected into the sectors', () => {
    const raw = clean({
      ...randomPinnedSpec(52, 8, 3),
      chain: { sites: 8, boundary: 'periodic' },
      solve: { states: 1, tolerance: 1e-10 },
    });
    const cold = solvePoint(validateSpec(raw));
    const warm = solvePoint(validateSpec(raw), { initial: cold.groundStates[0] });
    expect(warm.record.energies[0]).toBeCloseTo(cold.record.energies[0], 10);
    expect(warm.record.solver.iterations).toBeLessThan(cold.record.solver.iterations);
  });
});

// Heisenberg ring through the docs/model.md mapping (N=2, exchange 1/2, diagonal term 1, moments -1/2,+1/2).
// Marshall's sign rule (Marshall 1955; Lieb and Mattis 1962) makes the ground state a singlet with
// crystal momentum 0 when L/2 is even and pi when L/2 is odd. Energies for L <= 12 from published
// small-ring tables (from memory, as in tests/point/solvePoint.test.ts).
describe('Heisenberg rings in sectors', () => {
  // L = 16: E0/L = -0.4463935, also from memory.
  const table: Record<number, number> = {
    4: -2,
    6: -2.8027756,
    8: -3.6510934,
    10: -4.5154463,
    12: -5.3873909,
    16: -7.1422963,
  };
  it.each([4, 6, 8, 10, 12, 14, 16, 18, 20])(
    'L = %i: ground-state momentum from Marshall sign rule',
    (L) => {
      const r = solvePoint(
        validateSpec({
          chain: { sites: L, boundary: 'periodic' },
          levels: { count: 2, tunnelling: 0 },
          exchange: { strength: 0.5 },
          ising: { strength: 1, moments: [-0.5, 0.5] },
          solve: { states: 1, tolerance: 1e-9, entanglement: 'none' },
        }),
      ).record;
      const ground = r.sectors![0];
      expect(ground.momentum).toBe((L / 2) % 2 === 0 ? 0 : L / 2);
      expect(ground.charge).toBe(L / 2); // S^z_total = 0: half the molecules in the upper level
      if (table[L] !== undefined) expect(r.energies[0]).toBeCloseTo(table[L], 6);
    },
    300_000,
  );
});
