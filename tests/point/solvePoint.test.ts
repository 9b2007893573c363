import { describe, expect, it } from 'vitest';
import { coreCount } from '../../src/threads/cores.js';
import { planPoint, solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';
import { densePinnedHamiltonian, denseSpectrum } from '../support/reference.js';
import { clean, randomPinnedSpec } from '../support/random.js';
import { entanglementOf } from '../support/narrow.js';

const solve = (raw: Record<string, unknown>) => solvePoint(validateSpec(raw)).record;

describe('one molecule on its ladder of levels', () => {
  // Tight-binding chain of N sites, open ends: E_k = -2J cos(k pi / (N+1)), k = 1..N (textbook).
  it.each([2, 5, 8])('open ladder of %i levels: E_k = -2J cos(k pi/(N+1))', (N) => {
    const J = 0.7;
    const r = solve({ chain: { sites: 1 }, levels: { count: N, tunnelling: J }, solve: { states: N } });
    const expected = Array.from({ length: N }, (_, k) => -2 * J * Math.cos(((k + 1) * Math.PI) / (N + 1))).sort(
      (a, b) => a - b,
    );
    r.energies.forEach((e, k) => expect(e).toBeCloseTo(expected[k], 12));
  });

  // Ring of N sites threaded by total phase Phi: E_m = -2J cos((2 pi m + Phi)/N) (textbook).
  it.each([
    [5, 0.9],
    [6, 2.0],
    [7, -1.3],
  ])('ring of %i levels with flux %f: E_m = -2J cos((2 pi m + Phi)/N)', (N, Phi) => {
    const J = 1.1;
    const r = solve({
      chain: { sites: 1 },
      levels: { count: N, boundary: 'ring', tunnelling: J, phase: Phi / N },
      solve: { states: N },
    });
    const expected = Array.from({ length: N }, (_, m) => -2 * J * Math.cos((2 * Math.PI * m + Phi) / N)).sort(
      (a, b) => a - b,
    );
    r.energies.forEach((e, k) => expect(e).toBeCloseTo(expected[k], 12));
  });

  // SSH pattern (Asboth, Oroszlany, Palyi, A Short Course on Topological Insulators, 2016, ch. 1):
  // chiral symmetry gives an exact zero mode for an odd number of sites; for an even number with the
  // weak link at the ends, the two edge modes sit at +-eps with eps falling like (J1/J2)^(N/2).
  it('alternating tunnelling, odd N: exact zero-energy edge mode', () => {
    for (const N of [7, 11, 15]) {
      const tunnelling = Array.from({ length: N - 1 }, (_, l) => (l % 2 === 0 ? 0.4 : 1.0));
      const r = solve({ chain: { sites: 1 }, levels: { count: N, tunnelling }, solve: { states: N } });
      expect(Math.abs(r.energies[(N - 1) / 2])).toBeLessThan(1e-13);
    }
  });

  it('alternating tunnelling, even N: edge-mode energy falls exponentially with N', () => {
    const J1 = 0.4;
    const J2 = 1.0;
    const eps: number[] = [];
    for (const N of [8, 10, 12, 14, 16]) {
      const tunnelling = Array.from({ length: N - 1 }, (_, l) => (l % 2 === 0 ? J1 : J2));
      const r = solve({ chain: { sites: 1 }, levels: { count: N, tunnelling }, solve: { states: N } });
      eps.push(Math.abs(r.energies[N / 2]));
      expect(r.energies[N / 2 - 1]).toBeCloseTo(-r.energies[N / 2], 12); // chiral partner
    }
    for (let k = 1; k < eps.length; k++) {
      const ratio = eps[k] / eps[k - 1];
      expect(ratio).toBeGreaterThan((0.9 * J1) / J2);
      expect(ratio).toBeLessThan((1.1 * J1) / J2);
    }
  });
});

describe('two-level molecules: spin chains', () => {
  // XX chain, open ends, solved by Jordan-Wigner free fermions (Lieb, Schultz, Mattis, Ann. Phys.
  // 16, 407 (1961)): H = V sum (S+_i S-_{i+1} + h.c.) has one-fermion energies 2V cos(k pi/(L+1)),
  // and the ground state fills all negative ones.
  it.each([4, 7, 10, 12])('XX chain of %i sites matches free fermions', (L) => {
    const V = 1.3;
    const r = solve({
      chain: { sites: L },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: V },
      solve: { states: 1 },
    });
    let e0 = 0;
    for (let k = 1; k <= L; k++) e0 += Math.min(0, 2 * V * Math.cos((k * Math.PI) / (L + 1)));
    expect(r.energies[0]).toBeCloseTo(e0, 10);
  });

  // Heisenberg ring through the docs/model.md mapping: exchange 1/2 and diagonal term 1 with moments
  // (-1/2, +1/2) give H = sum S_i.S_{i+1}. Ground energies of small periodic rings from published
  // exact-diagonalization tables; values quoted from memory.
  const heisenberg: [number, number][] = [
    [4, -2],
    [6, -2.8027756],
    [8, -3.6510934],
    [10, -4.5154463],
    [12, -5.3873909],
  ];
  it.each(heisenberg)('Heisenberg ring L=%i: E0 = %f', (L, e0) => {
    const r = solve({
      chain: { sites: L, boundary: 'periodic' },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: 0.5 },
      ising: { strength: 1, moments: [-0.5, 0.5] },
      solve: { states: 1 },
    });
    expect(r.energies[0]).toBeCloseTo(e0, 6);
  });

  it('Heisenberg ring L=8: the first excited level is a threefold triplet, all copies returned', () => {
    // Spin-rotation symmetry makes every level of total spin S (2S+1)-fold degenerate (common practice).
    const r = solve({
      chain: { sites: 8, boundary: 'periodic' },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: 0.5 },
      ising: { strength: 1, moments: [-0.5, 0.5] },
      solve: { states: 4 },
    });
    expect(r.solver.degeneracy).toBe(1);
    expect(r.energies[2] - r.energies[1]).toBeLessThan(1e-8);
    expect(r.energies[3] - r.energies[1]).toBeLessThan(1e-8);
    expect(r.energies[1] - r.energies[0]).toBeGreaterThan(0.1);
  });
});

describe('two molecules binding in the synthetic dimension', () => {
  // Two-body lattice calculation: in the relative coordinate r = n2 - n1 the pair hops with 2J (at
  // zero total momentum) and exchange couples r = +1 and r = -1 with V; the odd channel is a
  // half-infinite chain with an edge potential -V, whose bound state has E = -V - (2J)^2/V for V > 2J.
  it('approaches -V - 4J^2/V as the number of levels grows (extrapolated in 1/N^2)', () => {
    const J = 1;
    const V = 3;
    const exact = -V - (4 * J * J) / V;
    const levels = [20, 30, 40];
    const e = levels.map(
      (N) =>
        solve({
          chain: { sites: 2 },
          levels: { count: N, tunnelling: J },
          exchange: { strength: V },
          solve: { states: 1 },
        }).energies[0],
    );
    // finite ladders bind less strongly, and the error shrinks with N
    for (let k = 0; k < e.length; k++) expect(e[k]).toBeGreaterThan(exact);
    expect(Math.abs(e[2] - exact)).toBeLessThan(Math.abs(e[0] - exact));
    // Richardson step in 1/N^2 from the two largest ladders
    const [n1, n2] = [levels[1], levels[2]];
    const extrapolated = (e[2] * n2 * n2 - e[1] * n1 * n1) / (n2 * n2 - n1 * n1);
    expect(Math.abs(extrapolated - exact)).toBeLessThan(Math.abs(e[2] - exact));
    expect(Math.abs(extrapolated - exact)).toBeLessThan(1e-2);
  });
});

describe('Lanczos path against the dense reference', () => {
  // Random specs with every term on; spectra from ml-matrix's dense eigensolver applied to a plain
  // element-by-element build of the Hamiltonian (tests/support/reference.ts).
  it.each([
    [21, 6, 3],
    [22, 4, 5],
    [23, 9, 2],
    [24, 6, 3],
  ])('seed %i, L=%i, N=%i', (seed, L, N) => {
    // full space on purpose: this checks the Lanczos path itself (sectors have tests of their own)
    const spec = validateSpec(
      clean({ ...randomPinnedSpec(seed, L, N), solve: { states: 4, tolerance: 1e-10, symmetries: 'none' } }),
    );
    const r = solvePoint(spec).record;
    expect(r.solver.method).toBe('lanczos');
    expect(r.solver.converged).toBe(true);
    const ref = denseSpectrum(densePinnedHamiltonian(spec));
    r.energies.forEach((e, k) => expect(Math.abs(e - ref[k])).toBeLessThan(1e-9 * Math.max(1, Math.abs(ref[k]))));
    for (const res of r.solver.residuals) expect(res).toBeLessThanOrEqual(spec.solve.tolerance);
  });
});

describe('how many sectors are solved at once', () => {
  // Each sector solved at the same time holds its own matrix and Krylov basis, so the memory
  // limit decides how many run together (the estimate itself is compared with measured peaks in
  // `npm run bench`). 12 x 3 = 531,441 states: large enough to be worth a second thread.
  const spec = validateSpec({
    chain: { sites: 12, boundary: 'periodic' },
    levels: { count: 3, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 2 },
  });
  it.skipIf(coreCount() < 2)(
    'two at once take more memory than one, and a limit between the two keeps it to one',
    () => {
      const two = planPoint(spec, { threads: 2, maxMemory: Number.MAX_SAFE_INTEGER });
      const one = planPoint(spec, { threads: 1, maxMemory: Number.MAX_SAFE_INTEGER });
      expect(one.sectorThreads).toBe(1);
      expect(two.sectorThreads).toBe(2);
      expect(two.memory.parts.sector_matrix).toBe(2 * one.memory.parts.sector_matrix);
      const between = (one.memory.totalBytes + two.memory.totalBytes) / 2;
      const limited = planPoint(spec, { threads: 2, maxMemory: between });
      expect(limited.sectorThreads).toBe(1);
      expect(limited.memory.totalBytes).toBe(one.memory.totalBytes);
    },
  );
  it('the spec can ask for one thread', () => {
    const raw = {
      chain: { sites: 12, boundary: 'periodic' },
      levels: { count: 3, tunnelling: 1 },
      solve: { threads: 1 },
    };
    expect(planPoint(validateSpec(raw), { threads: 2, maxMemory: Number.MAX_SAFE_INTEGER }).sectorThreads).toBe(1);
  });
  it('a small point stays on one thread: starting another would cost more than it saves', () => {
    const raw = { chain: { sites: 9, boundary: 'periodic' }, levels: { count: 3, tunnelling: 1 } };
    expect(planPoint(validateSpec(raw), { threads: 2, maxMemory: Number.MAX_SAFE_INTEGER }).sectorThreads).toBe(1);
  });
});

describe('ground states only when the caller uses them', () => {
  // A sector solve builds full-space ground states only if asked (or for entanglement); the record
  // must not depend on it. Periodic 8 x 3 with every symmetry the model has (common practice: the
  // same answer with or without an optional by-product).
  const raw = {
    chain: { sites: 8, boundary: 'periodic' },
    levels: { count: 3, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 3, entanglement: 'none' },
  };
  it('gives the same record without them, and still computes entanglement', () => {
    const withStates = solvePoint(validateSpec(raw));
    const without = solvePoint(validateSpec(raw), { groundStates: false });
    expect(withStates.record.solver.symmetries?.length).toBeGreaterThan(0);
    expect(withStates.groundStates.length).toBeGreaterThan(0);
    expect(without.groundStates).toEqual([]);
    expect(without.record.energies).toEqual(withStates.record.energies);
    expect(without.record.observables).toEqual(withStates.record.observables);
    const cut = validateSpec({ ...raw, solve: { states: 3, entanglement: 'half' } });
    const entangled = solvePoint(cut, { groundStates: false });
    expect(entangled.record.observables.entanglement).toEqual(solvePoint(cut).record.observables.entanglement);
    expect(entanglementOf(entangled.record.observables).length).toBe(1);
  });
});

describe('a sector solve reports the stored elements of its sector matrices', () => {
  // With the total level charge as the only symmetry (no tunnelling), the sectors are blocks of the
  // Hamiltonian in the basis of level configurations: every nonzero element lies in exactly one
  // block, so the blocks together store exactly the nonzero entries of the dense matrix, counted
  // here from the plain element-by-element reference (tests/support/reference.ts).
  it('charge sectors store the nonzero entries of the dense Hamiltonian', () => {
    const raw = {
      chain: { sites: 5 },
      levels: { count: 3, tunnelling: 0, detuning: [0, 0.37, 1.1] },
      exchange: { strength: 1.3, weights: [1, 0.8] },
      ising: { strength: 0.4, moments: [0.2, -0.5, 0.9] },
      solve: { states: 3, symmetries: ['charge'] },
    };
    const spec = validateSpec(raw);
    const r = solvePoint(spec).record;
    expect(r.solver.symmetries).toEqual(['charge']);
    expect(r.basis.operator).toBe('stored');
    const dense = densePinnedHamiltonian(spec);
    let nonzero = 0;
    for (let row = 0; row < dense.dim; row++)
      for (let col = 0; col < dense.dim; col++)
        if (dense.re.get(row, col) !== 0 || dense.im.get(row, col) !== 0) nonzero++;
    expect(nonzero).toBeGreaterThan(dense.dim);
    expect(r.basis.nonzeros).toBe(nonzero);
  });
});
