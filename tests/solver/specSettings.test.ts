// The [solve] section as eigensolver options: the same numbers under the solver's names, unset
// ones left to the solver's defaults.
import { describe, expect, it } from 'vitest';
import { solveSettings } from '../../src/solver/specSettings.js';
import { validateSpec } from '../../src/spec/spec.js';

const spec = (solve: Record<string, unknown>) => validateSpec({ chain: { sites: 2 }, levels: { count: 2 }, solve });

describe('solveSettings', () => {
  it('tolerance, products budget, Krylov size and seed as the spec sets them', () => {
    const s = spec({ tolerance: 1e-7, max_matvecs: 5000, krylov: 30, seed: 11 }).solve;
    expect(solveSettings(s)).toEqual({ tolerance: 1e-7, maxMatvecs: 5000, krylovSize: 30, seed: 11 });
  });

  it('unset budget and Krylov size stay undefined, so the solver chooses', () => {
    const settings = solveSettings(spec({}).solve);
    expect(settings.maxMatvecs).toBeUndefined();
    expect(settings.krylovSize).toBeUndefined();
    expect(settings.tolerance).toBeGreaterThan(0);
    expect(Number.isInteger(settings.seed)).toBe(true);
  });
});
