// A process that validates specs and nothing more (a scan worker) imports src/spec/spec.ts alone.
// It must still know every section a user may write: this file imports nothing else.
import { describe, expect, it, vi } from 'vitest';

describe('validating with src/spec/spec.ts alone', () => {
  it('accepts [units], [evolve] and [scan], and resolves [units]', async () => {
    // A fresh module graph, whatever other test files loaded before.
    vi.resetModules();
    const { validateSpec } = await import('../../src/spec/spec.js');
    const spec = validateSpec({
      chain: { sites: 2 },
      levels: { count: 2 },
      units: { rabi_khz: 10 },
      evolve: { times: [0, 1], time_unit: 'ms' },
      scan: { axis: [{ key: 'exchange.strength', values: [0, 1] }] },
    });
    expect(Object.keys(spec.extra)).toEqual(['units', 'evolve', 'scan']);
    // J = Omega/2 = 5 kHz is the energy unit when none is given.
    expect(spec.levels.tunnelling).toEqual([1]);
  });
});
