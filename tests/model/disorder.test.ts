// Disorder realizations (issue 20) against the plain dense build of docs/model.md
// (tests/support/occupationReference.ts, ml-matrix's dense eigensolver) with the values drawn by the
// reference generator of tests/support/disorderReference.ts (splitmix64 on 32-bit halves, written
// from docs/model.md, sharing no code with src/): random small chains of every particle kind with
// every noise kind on and partial filling, both symmetry settings; the drawn values the model keeps;
// the generator itself against splitmix64's published first outputs; and the spec's errors.
import { describe, expect, it } from 'vitest';
import { buildModel } from '../../src/model/model.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { SpecError } from '../../src/errors/errors.js';
import { validateSpec } from '../../src/spec/spec.js';
import { splitmix64 } from '../../src/spec/disorder.js';
import { buildDense, groundMixture, type Kind } from '../support/occupationReference.js';
import { realizeChain, splitmix, type DisorderRaw } from '../support/disorderReference.js';
import { rng } from '../support/random.js';

const KINDS: Kind[] = ['pinned', 'hardcore', 'boson', 'fermion'];
const CORRELATIONS = {
  tunnelling: ['common', 'per_site', 'per_link'],
  phase: ['common', 'per_site', 'per_link'],
  detuning: ['common', 'per_site', 'per_level'],
  exchange: ['common', 'per_pair'],
} as const;

function randomCase(seed: number, kind: Kind): { spec: Record<string, any>; disorder: DisorderRaw } {
  const r = rng(seed);
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  const pick = <T>(list: readonly T[]): T => list[Math.floor(r() * list.length)];
  const N = kind === 'pinned' ? 2 + Math.floor(r() * 2) : 2;
  const L0 = kind === 'pinned' ? 3 + Math.floor(r() * 2) : 3;
  const ring = N >= 3 && r() < 0.5;
  const links = ring ? N : N - 1;
  const spec: Record<string, any> = {
    chain: { sites: L0, boundary: L0 >= 3 && r() < 0.5 ? 'periodic' : 'open' },
    levels: {
      count: N,
      boundary: ring ? 'ring' : 'open',
      tunnelling: Array.from({ length: links }, () => u(0.3, 1.4)),
      phase: Array.from({ length: links }, () => u(-1, 1)),
      detuning: Array.from({ length: N }, () => u(-0.5, 0.5)),
    },
    exchange: { strength: u(0.3, 2), range: pick(['nearest', 'dipolar']), weights: pick(['uniform', 'rotor']) },
    ising: { strength: u(-1, 1), moments: Array.from({ length: N }, () => u(-1, 1)) },
    solve: { states: 3, tolerance: 1e-10 },
  };
  if (kind !== 'pinned') {
    spec.particles = { kind, number: 2, hopping: u(0.2, 1) };
    if (kind === 'boson') spec.particles.onsite = u(0, 2);
  }
  const noise = (term: keyof typeof CORRELATIONS) => ({
    ...(r() < 0.5 ? { relative: u(0.05, 0.3) } : { absolute: u(0.05, 0.3) }),
    correlation: pick(CORRELATIONS[term]),
  });
  const disorder: DisorderRaw = {
    realizations: 5,
    seed: Math.floor(r() * 1e9),
    filling: r() < 0.6 ? u(0.5, 0.9) : 1,
    tunnelling: noise('tunnelling'),
    phase: noise('phase'),
    detuning: noise('detuning'),
    exchange: noise('exchange'),
  };
  return { spec, disorder };
}

describe('the generator', () => {
  it('splitmix64 gives its published outputs from state 0', () => {
    // splitmix64 (Steele, Lea and Flood, OOPSLA 2014; the reference C code by Vigna): from state 0
    // the first outputs are 0xe220a8397b1dcdaf, 0x6e789e6aa1b965f4 (common practice, from memory).
    expect(splitmix64(0n)).toBe(0xe220a8397b1dcdafn);
    expect(splitmix64(0x9e3779b97f4a7c15n)).toBe(0x6e789e6aa1b965f4n);
  });
  it('equals the 32-bit-halves reference on random states', () => {
    const r = rng(7);
    for (let k = 0; k < 200; k++) {
      const hi = Math.floor(r() * 2 ** 32);
      const lo = Math.floor(r() * 2 ** 32);
      const ref = splitmix({ hi, lo });
      expect(splitmix64((BigInt(hi) << 32n) | BigInt(lo))).toBe((BigInt(ref.hi) << 32n) | BigInt(ref.lo));
    }
  });
});

describe('realizations against the dense reference', () => {
  for (const kind of KINDS)
    for (let c = 0; c < 4; c++)
      for (const symmetries of ['auto', 'none'] as const)
        it(`${kind} case ${c}, realization ${c % 5}, symmetries ${symmetries}`, () => {
          const { spec, disorder } = randomCase(1000 * KINDS.indexOf(kind) + c, kind);
          const realization = c % 5;
          const raw = structuredClone({
            ...spec,
            solve: { ...spec.solve, symmetries },
            disorder: { ...disorder, realization },
          });
          const validated = validateSpec(raw);
          const ref = realizeChain(spec, disorder, realization);
          // The drawn values the record keeps are the reference's, bit for bit.
          const model = buildModel(validated);
          expect(model.disorder?.particles).toBe(ref.particles);
          expect(model.disorder?.tunnelling).toEqual(ref.model.siteTunnelling);
          expect(model.disorder?.phase).toEqual(ref.model.sitePhase);
          expect(model.disorder?.detuning).toEqual(ref.model.siteDetuning);
          for (const [i, j, v] of model.disorder?.exchange ?? []) expect(v).toBe(ref.model.exchangeValues?.[i][j]);
          const dense = groundMixture(buildDense(ref.model), 1e-10);
          const solved = solvePoint(validated).record;
          const want = dense.values.slice(0, solved.energies.length);
          expect(solved.energies.length).toBe(Math.min(3, dense.values.length));
          solved.energies.forEach((e, k) => expect(Math.abs(e - want[k])).toBeLessThan(1e-8));
        });
});

describe('partial filling', () => {
  it('pinned chains lose the empty sites; itinerant kinds keep them and take the filled count as particles', () => {
    const base = { chain: { sites: 8 }, levels: { count: 2 } };
    for (let r = 0; r < 10; r++) {
      const pinned = buildModel(
        validateSpec({ ...base, disorder: { realizations: 10, filling: 0.5, realization: r } }),
      );
      const ref = realizeChain(base, { realizations: 10, filling: 0.5 }, r);
      expect(Array.from(pinned.geometry.latticeIndex)).toEqual(ref.kept);
      expect(pinned.particleNumber).toBe(ref.kept.length);
      const itinerant = validateSpec({
        ...base,
        particles: { kind: 'hardcore', number: 3, hopping: 1 },
        disorder: { realizations: 10, filling: 0.5, realization: r },
      });
      expect(itinerant.chain.sites).toBe(8);
      expect(itinerant.particles.number).toBe(ref.kept.length);
    }
  });
});

describe('spec errors name the key', () => {
  const base = { chain: { sites: 3 }, levels: { count: 2 } };
  const keyOf = (disorder: unknown, extra: Record<string, unknown> = {}): string => {
    try {
      validateSpec({ ...base, ...extra, disorder });
    } catch (e) {
      if (e instanceof SpecError) return e.keyPath;
      throw e;
    }
    return 'no error';
  };
  it.each([
    [{}, 'disorder.realizations'],
    [{ realizations: 0 }, 'disorder.realizations'],
    [{ realizations: 2, seed: -1 }, 'disorder.seed'],
    [{ realizations: 2, realization: 2 }, 'disorder.realization'],
    [{ realizations: 2, filling: 0 }, 'disorder.filling'],
    [{ realizations: 2, filling: 1.5 }, 'disorder.filling'],
    [{ realizations: 2, tunnelling: {} }, 'disorder.tunnelling'],
    [{ realizations: 2, tunnelling: { relative: 0.1, absolute: 0.1 } }, 'disorder.tunnelling'],
    [{ realizations: 2, tunnelling: { relative: -0.1 } }, 'disorder.tunnelling.relative'],
    [{ realizations: 2, detuning: { absolute: 0.1, correlation: 'per_link' } }, 'disorder.detuning.correlation'],
    [{ realizations: 2, exchange: { absolute: 0.1, correlation: 'per_site' } }, 'disorder.exchange.correlation'],
    [{ realizations: 2, phase: { relative: 0.1, width: 2 } }, 'disorder.phase.width'],
    [{ realizations: 2, noise: 1 }, 'disorder.noise'],
  ])('%j -> %s', (disorder, key) => expect(keyOf(disorder)).toBe(key));
  it('cuts by position with partial filling of pinned chains', () => {
    expect(keyOf({ realizations: 2, filling: 0.5 }, { solve: { entanglement: 'half' } })).toBe('solve.entanglement');
  });
  it('itinerant kinds with partial filling and [evolve]', () => {
    expect(
      keyOf(
        { realizations: 2, filling: 0.5 },
        { particles: { kind: 'hardcore', number: 1, hopping: 1 }, evolve: { initial: [1, -1, -1], times: [0, 1] } },
      ),
    ).toBe('disorder.filling');
  });
  it('zipped scans', () => {
    expect(
      keyOf({ realizations: 2 }, { scan: { zip: true, axis: [{ key: 'exchange.strength', values: [1, 2] }] } }),
    ).toBe('scan.zip');
  });
});

describe('symmetries are detected per realization', () => {
  // A common draw scales every site alike, so a ring keeps its translations; independent draws per
  // site and link break them (detection by commutation, docs/model.md).
  const ring = (correlation: string) =>
    solvePoint(
      validateSpec({
        chain: { sites: 5, boundary: 'periodic' },
        levels: { count: 2 },
        exchange: { strength: 1 },
        solve: { states: 2 },
        disorder: { realizations: 3, realization: 2, tunnelling: { relative: 0.1, correlation } },
      }),
    ).record;
  it('a common draw keeps the translations', () => {
    expect(ring('common').solver.symmetries).toContain('translation');
  });
  it('per-link draws break them', () => {
    expect(ring('per_link').solver.symmetries ?? []).not.toContain('translation');
  });
});

describe('degenerate ensembles', () => {
  it('zero widths reproduce the clean spec: every kind, energies equal to the last bit', () => {
    for (const kind of KINDS) {
      const { spec } = randomCase(77 + KINDS.indexOf(kind), kind);
      const zero = { relative: 0 };
      const clean = solvePoint(validateSpec(structuredClone(spec))).record.energies;
      const noisy = solvePoint(
        validateSpec({
          ...structuredClone(spec),
          disorder: {
            realizations: 2,
            realization: 1,
            tunnelling: zero,
            phase: { absolute: 0 },
            detuning: { absolute: 0 },
            exchange: zero,
          },
        }),
      ).record.energies;
      // x (1 + 0 g) and x + 0 g are x: the same model, the same arithmetic.
      expect(noisy).toEqual(clean);
    }
  });
  it('a common draw gives every site and link the same factor', () => {
    const model = buildModel(
      validateSpec({
        chain: { sites: 4 },
        levels: { count: 3, tunnelling: [1, 0.5] },
        disorder: { realizations: 1, tunnelling: { relative: 0.3, correlation: 'common' } },
      }),
    );
    const t = model.disorder!.tunnelling!;
    const factor = t[0][0] / 1;
    expect(factor).not.toBe(1);
    for (const row of t) {
      expect(row[0]).toBe(factor);
      expect(row[1]).toBe(0.5 * factor);
    }
  });
});
