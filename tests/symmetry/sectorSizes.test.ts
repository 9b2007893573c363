// Sector dimensions counted without building anything (src/symmetry/sectorSizes.ts), against
// combinatorial counts from the literature and against the sectors the solver really builds.
import { describe, expect, it } from 'vitest';
import { sectorSizes } from '../../src/symmetry/sectorSizes.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import type { SymmetryName } from '../../src/symmetry/group.js';
import { runCli } from '../support/cli.js';

const use = (...names: SymmetryName[]) =>
  Object.fromEntries(
    (['translation', 'reflection', 'level_flip', 'charge'] as const).map((n) => [n, names.includes(n)]),
  ) as Record<SymmetryName, boolean>;

function dimensionOf(
  sites: number,
  levels: number,
  used: Record<SymmetryName, boolean>,
  label: Record<string, number | null>,
): number {
  const sizes = sectorSizes({ sites, levels, isComplex: false }, used);
  const found = sizes.find((s) =>
    Object.entries(label).every(([k, v]) => (s.label as unknown as Record<string, unknown>)[k] === v),
  );
  if (!found) throw new Error(`no sector ${JSON.stringify(label)}`);
  return found.dimension;
}

describe('sector dimensions, counted from the group', () => {
  // The k = 0 sector of the translations holds one state per necklace: OEIS A000031 (2 colours)
  // and A001867 (3 colours), n = 3..12 / 3..10.
  it('momentum 0 counts necklaces', () => {
    const binary = [4, 6, 8, 14, 20, 36, 60, 108, 188, 352];
    binary.forEach((count, i) => expect(dimensionOf(i + 3, 2, use('translation'), { momentum: 0 })).toBe(count));
    const ternary = [11, 24, 51, 130, 315, 834, 2195, 5934];
    ternary.forEach((count, i) => expect(dimensionOf(i + 3, 3, use('translation'), { momentum: 0 })).toBe(count));
  });

  // Adding the reflection, the symmetric k = 0 sector holds one state per bracelet: OEIS A000029
  // (2 colours, n = 3..12) and A027671 (3 colours, n = 3..10).
  it('momentum 0 with even parity counts bracelets', () => {
    const binary = [4, 6, 8, 13, 18, 30, 46, 78, 126, 224];
    binary.forEach((count, i) =>
      expect(dimensionOf(i + 3, 2, use('translation', 'reflection'), { momentum: 0, parity: 1 })).toBe(count),
    );
    const ternary = [10, 21, 39, 92, 198, 498, 1219, 3210];
    ternary.forEach((count, i) =>
      expect(dimensionOf(i + 3, 3, use('translation', 'reflection'), { momentum: 0, parity: 1 })).toBe(count),
    );
  });

  // Binary necklaces with q ones: (1/L) sum_{d | gcd(L, q)} phi(d) C(L/d, q/d) (e.g. Riordan,
  // An Introduction to Combinatorial Analysis): L = 12 gives 1, 1, 6, 19, 43, 66, 80, 66, 43, 19, 6, 1, 1.
  it('momentum 0 at fixed charge counts necklaces of fixed content', () => {
    const counts = [1, 1, 6, 19, 43, 66, 80, 66, 43, 19, 6, 1, 1];
    counts.forEach((count, q) =>
      expect(dimensionOf(12, 2, use('translation', 'charge'), { momentum: 0, charge: q })).toBe(count),
    );
  });

  it('the sectors and their copies add up to the whole space, for every combination of symmetries', () => {
    const combos: SymmetryName[][] = [
      ['translation'],
      ['reflection'],
      ['level_flip'],
      ['charge'],
      ['translation', 'reflection'],
      ['translation', 'level_flip'],
      ['translation', 'charge'],
      ['reflection', 'level_flip'],
      ['reflection', 'charge'],
      ['translation', 'reflection', 'level_flip'],
      ['translation', 'reflection', 'charge'],
      ['translation', 'reflection', 'level_flip', 'charge'],
    ];
    for (const names of combos) {
      for (const [sites, levels] of [
        [6, 3],
        [7, 2],
        [8, 2],
        [5, 4],
      ]) {
        for (const isComplex of [false, true]) {
          const sizes = sectorSizes({ sites, levels, isComplex }, use(...names));
          const total = sizes.reduce((sum, s) => sum + s.dimension * (1 + s.copies), 0);
          expect(total, `${names.join('+')} on ${sites} x ${levels}`).toBe(levels ** sites);
          for (const s of sizes) expect(s.dimension).toBeGreaterThanOrEqual(0);
        }
      }
    }
  });

  it('equal the sectors the solver builds', () => {
    for (const raw of [
      { chain: { sites: 6, boundary: 'periodic' }, levels: { count: 3 }, exchange: { strength: 1 } },
      { chain: { sites: 6, boundary: 'periodic' }, levels: { count: 3, tunnelling: 0 }, exchange: { strength: 1 } },
      { chain: { sites: 5 }, levels: { count: 3 }, exchange: { strength: 1 } },
      { chain: { sites: 6, boundary: 'periodic' }, levels: { count: 3, phase: 0.3 }, exchange: { strength: 1 } },
    ]) {
      const spec = validateSpec(raw);
      const { record } = solvePoint(spec, { groundStates: false });
      const used = use(...(record.solver.symmetries ?? []));
      const counted = new Map(
        sectorSizes(
          { sites: spec.chain.sites, levels: spec.levels.count, isComplex: spec.levels.phase.some((p) => p !== 0) },
          used,
        ).map((s) => [JSON.stringify(s.label), s.dimension]),
      );
      expect(record.solver.sector_runs?.length).toBeGreaterThan(0);
      for (const run of record.solver.sector_runs ?? [])
        expect(counted.get(JSON.stringify(run.label))).toBe(run.dimension);
    }
  });
});

describe('rungchain check', () => {
  it('shows the sectors, the largest one and a rough time', () => {
    // 8 sites x 2 levels, translations only: momenta 1..3 pair with 7..5 (a real Hamiltonian), so 5
    // sectors are solved; the largest is k = 0 with 36 states (binary necklaces of length 8, A000031).
    const r = runCli([
      'check',
      'tests/fixtures/xx-chain.toml',
      '--set',
      'chain.boundary=periodic',
      '--set',
      'solve.symmetries=["translation"]',
    ]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(
      /^sectors +5 to solve \(and 3 reported as their copies\), the largest of 36 states \(counted exactly\)$/m,
    );
    expect(r.stdout).toMatch(/^time estimate +(under a second|about [\d.]+ (s|min|h|days)) \(rough/m);
    const full = runCli(['check', 'tests/fixtures/xx-chain.toml', '--set', 'solve.symmetries=none']);
    expect(full.stdout).toMatch(/^sectors +1: the full space of 256 states, no symmetry used$/m);
  });
});
