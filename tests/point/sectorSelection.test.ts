// A sector selection or a list of symmetries that the solve would not use is refused with one
// line naming the key, instead of quietly solving the whole space: docs/model.md, "a key that does
// nothing for the chosen particle kind is an error naming it", and solve.symmetries lists are
// "each still checked".

import { describe, expect, it } from 'vitest';
import { planPoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';

const hardcore = {
  chain: { sites: 3, boundary: 'periodic' },
  levels: { count: 2 },
  particles: { kind: 'hardcore', number: 2, hopping: 1 },
};
const pinned = { chain: { sites: 3, boundary: 'periodic' }, levels: { count: 2 }, exchange: { strength: 1 } };

describe('sector selections the solve would not use', () => {
  it('itinerant kinds refuse solve.sector and a list of symmetries', () => {
    expect(() => planPoint(validateSpec({ ...hardcore, solve: { sector: { momentum: 1 } } }))).toThrow(
      /^solve\.sector: .*pinned chains only/,
    );
    expect(() => planPoint(validateSpec({ ...hardcore, solve: { symmetries: ['translation'] } }))).toThrow(
      /^solve\.symmetries: .*pinned chains only/,
    );
    // The defaults stay valid.
    expect(() => planPoint(validateSpec({ ...hardcore, solve: { symmetries: 'none' } }))).not.toThrow();
    expect(() => planPoint(validateSpec(hardcore))).not.toThrow();
  });

  it('a pinned chain refuses solve.sector with symmetries = "none"', () => {
    expect(() =>
      planPoint(validateSpec({ ...pinned, solve: { symmetries: 'none', sector: { momentum: 1 } } })),
    ).toThrow(/^solve\.sector: .*"none"/);
    expect(() => planPoint(validateSpec({ ...pinned, solve: { sector: { momentum: 1 } } }))).not.toThrow();
  });

  it('a pinned chain without any symmetry refuses solve.sector', () => {
    // One site has no translation, reflection is trivial there, detuning breaks the level flip and tunnelling the charge.
    const single = {
      chain: { sites: 1 },
      levels: { count: 3, detuning: [0, 0.3, 1] },
      solve: { sector: { parity: 1 } },
    };
    expect(() => planPoint(validateSpec(single))).toThrow(/^solve\.sector/);
  });
});
