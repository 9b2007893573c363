// The [lattice] section (issue 19): keys, defaults, and errors naming their key paths.
import { describe, expect, it } from 'vitest';
import { SpecError } from '../../src/errors/errors.js';
import { latticeOf } from '../../src/spec/lattice.js';
import { validateSpec } from '../../src/spec/spec.js';

const levels = { count: 2 };

function specErrorOf(raw: Record<string, unknown>): SpecError {
  try {
    validateSpec(raw);
  } catch (e) {
    if (e instanceof SpecError) return e;
    throw e;
  }
  throw new Error(`expected a SpecError for ${JSON.stringify(raw)}`);
}

function expectSpecError(raw: Record<string, unknown>, keyPath: string, messagePart: string): void {
  const error = specErrorOf(raw);
  expect(error.keyPath).toBe(keyPath);
  expect(error.message).toContain(messagePart);
}

describe('[lattice] defaults', () => {
  it('a square lattice needs no [chain]: its sites are the model sites, open, field along z, spacing 1', () => {
    const spec = validateSpec({ lattice: { shape: 'square', size: [3, 2] }, levels });
    expect(spec.chain).toEqual({ sites: 6, boundary: 'open' });
    const lattice = latticeOf(spec);
    expect(lattice).toMatchObject({
      shape: 'square',
      size: [3, 2],
      boundary: ['open', 'open'],
      spacing: [1, 1],
      positions: null,
      bonds: null,
      field: [0, 0, 1],
      vacancies: [],
      latticeSites: 6,
    });
    expect(spec.particles.number).toBe(6);
  });

  it('a ladder of [L] has two legs; a chain lattice stands for [chain]', () => {
    expect(latticeOf(validateSpec({ lattice: { shape: 'ladder', size: [4] }, levels }))?.size).toEqual([4, 2]);
    // A periodic ladder is periodic along its legs; its two-site rungs stay open.
    const ring = latticeOf(validateSpec({ lattice: { shape: 'ladder', size: [4], boundary: 'periodic' }, levels }));
    expect(ring?.boundary).toEqual(['periodic', 'open']);
    const chain = validateSpec({ lattice: { shape: 'chain', size: [5], boundary: 'periodic' }, levels });
    expect(chain.chain).toEqual({ sites: 5, boundary: 'periodic' });
    // A number is one direction's size.
    expect(validateSpec({ lattice: { shape: 'chain', size: 5 }, levels }).chain.sites).toBe(5);
  });

  it('vacancies remove sites: the model has the rest, and pinned molecules number them', () => {
    const spec = validateSpec({ lattice: { shape: 'square', size: [3, 3], vacancies: [4, 0] }, levels });
    expect(spec.chain.sites).toBe(7);
    expect(latticeOf(spec)?.vacancies).toEqual([0, 4]);
  });

  it('the field is normalized; custom positions get z = 0 in 2D', () => {
    const spec = validateSpec({
      lattice: {
        shape: 'custom',
        positions: [
          [0, 0],
          [1, 0],
          [0, 2],
        ],
        field: [3, 0, 4],
      },
      levels,
    });
    const lattice = latticeOf(spec);
    expect(lattice?.field).toEqual([0.6, 0, 0.8]);
    expect(lattice?.positions).toEqual([
      [0, 0, 0],
      [1, 0, 0],
      [0, 2, 0],
    ]);
    expect(lattice?.spacing).toEqual([1, 1, 1]);
  });

  it('auto entanglement computes no cut off a chain, and keeps the half chain on one', () => {
    expect(validateSpec({ lattice: { shape: 'square', size: [2, 2] }, levels }).solve.entanglement).toBe('none');
    expect(validateSpec({ lattice: { shape: 'chain', size: [4] }, levels }).solve.entanglement).toBe('auto');
  });

  it('[chain] and [lattice] together when they agree', () => {
    const spec = validateSpec({
      chain: { sites: 4, boundary: 'periodic' },
      lattice: { shape: 'chain', size: [4], boundary: 'periodic' },
      levels,
    });
    expect(spec.chain).toEqual({ sites: 4, boundary: 'periodic' });
  });
});

describe('[lattice] errors name their keys', () => {
  const cases: [string, Record<string, unknown>, string, string][] = [
    ['no shape', { size: [2, 2] }, 'lattice.shape', 'required'],
    ['unknown shape', { shape: 'hexagon', size: [2, 2] }, 'lattice.shape', 'expected one of'],
    ['no size', { shape: 'square' }, 'lattice.size', 'required'],
    ['square of 1 direction', { shape: 'square', size: [4] }, 'lattice.size', '2 numbers or 3 numbers'],
    ['triangular of 3', { shape: 'triangular', size: [2, 2, 2] }, 'lattice.size', '2 numbers'],
    ['zero size', { shape: 'square', size: [2, 0] }, 'lattice.size[1]', 'integer >= 1'],
    ['too many sites', { shape: 'square', size: [40, 40] }, 'lattice.size', 'at most 1024'],
    ['size on custom', { shape: 'custom', size: [2], positions: [[0, 0]] }, 'lattice.size', 'not used'],
    ['no positions', { shape: 'custom' }, 'lattice.positions', 'required'],
    ['positions off custom', { shape: 'square', size: [2, 2], positions: [[0, 0]] }, 'lattice.positions', 'only for'],
    [
      'mixed dimensions',
      {
        shape: 'custom',
        positions: [
          [0, 0],
          [1, 0, 0],
        ],
      },
      'lattice.positions[1]',
      'coordinates',
    ],
    [
      'same position',
      {
        shape: 'custom',
        positions: [
          [0, 0],
          [1, 0],
          [0, 0],
        ],
      },
      'lattice.positions[2]',
      'same position',
    ],
    ['periodic custom', { shape: 'custom', positions: [[0, 0]], boundary: 'periodic' }, 'lattice.boundary', 'open'],
    [
      'bad boundary',
      { shape: 'square', size: [3, 3], boundary: ['open', 'closed'] },
      'lattice.boundary[1]',
      'expected one of',
    ],
    ['boundary count', { shape: 'square', size: [3, 3], boundary: ['open'] }, 'lattice.boundary', 'one value or 2'],
    [
      'short periodic',
      { shape: 'square', size: [4, 2], boundary: 'periodic' },
      'lattice.boundary',
      'at least 3 sites, but direction 1 has lattice.size[1] = 2; give one boundary per direction, e.g. ["periodic", "open"]',
    ],
    [
      'periodic rungs',
      { shape: 'ladder', size: [4], boundary: ['periodic', 'periodic'] },
      'lattice.boundary',
      'at least 3',
    ],
    ['bad spacing', { shape: 'square', size: [3, 3], spacing: [1, 0] }, 'lattice.spacing[1]', 'positive'],
    ['zero field', { shape: 'square', size: [2, 2], field: [0, 0, 0] }, 'lattice.field', '[0, 0, 0]'],
    ['2D field', { shape: 'square', size: [2, 2], field: [0, 1] }, 'lattice.field', '[x, y, z]'],
    [
      'vacancy out of range',
      { shape: 'square', size: [2, 2], vacancies: [4] },
      'lattice.vacancies[0]',
      'does not exist',
    ],
    ['vacancy twice', { shape: 'square', size: [2, 2], vacancies: [1, 1] }, 'lattice.vacancies[1]', 'twice'],
    ['all vacant', { shape: 'chain', size: [2], vacancies: [0, 1] }, 'lattice.vacancies', 'leave at least one'],
    ['self bond', { shape: 'square', size: [2, 2], bonds: [[1, 1]] }, 'lattice.bonds[0]', 'two different sites'],
    [
      'bond twice',
      {
        shape: 'square',
        size: [2, 2],
        bonds: [
          [0, 1],
          [1, 0],
        ],
      },
      'lattice.bonds[1]',
      'twice',
    ],
    ['unknown key', { shape: 'square', size: [2, 2], colour: 'red' }, 'lattice.colour', 'unknown key'],
  ];
  it.each(cases)('%s', (_, lattice, keyPath, part) => expectSpecError({ lattice, levels }, keyPath, part));

  it('[chain] and [lattice] that disagree: one error naming both', () => {
    const error = specErrorOf({ chain: { sites: 4 }, lattice: { shape: 'chain', size: [5] }, levels });
    expect(error.keyPath).toBe('chain');
    expect(error.message).toContain('chain.sites = 4');
    expect(error.message).toContain('lattice.size = [5]');
    expectSpecError(
      { chain: { sites: 4 }, lattice: { shape: 'square', size: [2, 2] }, levels },
      'chain',
      'lattice.shape',
    );
  });

  it('neither [chain] nor [lattice]', () => {
    expectSpecError({ levels }, 'chain', 'required section is missing (or describe the sites with [lattice])');
  });

  it('units.dipole_angle_deg with [lattice]: the field sets the angle', () => {
    expectSpecError(
      { lattice: { shape: 'square', size: [2, 2] }, levels, units: { dipole_angle_deg: 60 } },
      'units.dipole_angle_deg',
      'lattice.field',
    );
  });

  it('a dipolar cutoff beyond half a periodic box', () => {
    const lattice = { shape: 'square', size: [4, 6], boundary: ['periodic', 'open'] };
    expectSpecError(
      { lattice, levels, exchange: { strength: 1, range: 'dipolar', cutoff: 2.5 } },
      'exchange.cutoff',
      'half',
    );
    const ising = { strength: 1, moments: [0, 1], range: 'dipolar', cutoff: 3 };
    expectSpecError({ lattice, levels, ising }, 'ising.cutoff', 'half');
    // Exactly half a box is allowed: ties there are averaged.
    expect(() =>
      validateSpec({ lattice, levels, exchange: { strength: 1, range: 'dipolar', cutoff: 2 } }),
    ).not.toThrow();
    // An open lattice has no box.
    const open = { shape: 'square', size: [4, 6] };
    expect(() =>
      validateSpec({ lattice: open, levels, exchange: { strength: 1, range: 'dipolar', cutoff: 9 } }),
    ).not.toThrow();
  });

  it('custom bonds with pinned molecules do nothing', () => {
    expectSpecError({ lattice: { shape: 'square', size: [2, 2], bonds: [[0, 1]] }, levels }, 'lattice.bonds', 'pinned');
    const particles = { kind: 'hardcore', number: 2, hopping: 1 };
    expect(() =>
      validateSpec({ lattice: { shape: 'square', size: [2, 2], bonds: [[0, 1]] }, levels, particles }),
    ).not.toThrow();
  });

  it('position-based features off a chain: cuts, translations, reflections, momenta, parities', () => {
    const lattice = { shape: 'square', size: [2, 2] };
    expectSpecError({ lattice, levels, solve: { entanglement: 'half' } }, 'solve.entanglement', 'not a chain');
    // Translations need a periodic direction (then the solver checks that they commute).
    expectSpecError(
      { lattice, levels, solve: { symmetries: ['charge', 'translation'] } },
      'solve.symmetries[1]',
      'has none',
    );
    expectSpecError({ lattice, levels, solve: { symmetries: ['reflection'] } }, 'solve.symmetries[0]', 'chains only');
    expectSpecError(
      { lattice, levels, solve: { sector: { momentum: 0 } } },
      'solve.sector.momentum',
      'no periodic direction',
    );
    const periodic = { shape: 'square', size: [3, 3], boundary: 'periodic' };
    const accepted = validateSpec({ lattice: periodic, levels, solve: { sector: { momentum: [1, 2] } } });
    expect(accepted.solve.sector.momentum).toEqual([[1, 2]]);
    expect(
      validateSpec({
        lattice: periodic,
        levels,
        solve: {
          sector: {
            momentum: [
              [0, 0],
              [1, 2],
            ],
          },
        },
      }).solve.sector.momentum,
    ).toEqual([
      [0, 0],
      [1, 2],
    ]);
    expectSpecError(
      { lattice: periodic, levels, solve: { sector: { momentum: [[0, 0], 1] } } },
      'solve.sector.momentum[1]',
      'one entry per periodic direction',
    );
    expectSpecError({ lattice, levels, solve: { sector: { parity: 1 } } }, 'solve.sector.parity', 'chains only');
    // A chain with a vacancy is no longer a chain.
    const broken = { shape: 'chain', size: [5], vacancies: [2] };
    expectSpecError({ lattice: broken, levels, solve: { entanglement: [1] } }, 'solve.entanglement', 'not a chain');
  });

  it('pinned molecules fill the sites left by vacancies: the message says where the count comes from', () => {
    expectSpecError(
      { lattice: { shape: 'square', size: [2, 2], vacancies: [3] }, levels, particles: { number: 4 } },
      'particles.number',
      'must equal the 3 lattice sites left by lattice.vacancies, got 4',
    );
    expectSpecError(
      { lattice: { shape: 'square', size: [2, 2] }, levels, particles: { number: 3 } },
      'particles.number',
      'must equal the 4 sites of [lattice], got 3',
    );
    expectSpecError({ chain: { sites: 5 }, levels, particles: { number: 4 } }, 'particles.number', 'chain.sites = 5');
  });
});
