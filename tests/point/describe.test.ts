// A point as text: the plan `rungchain solve` prints before solving, and the record after.
import { describe, expect, it } from 'vitest';
import { describePlan, describeRecord, NOT_APPLICABLE } from '../../src/point/describe.js';
import { planPoint, solvePoint } from '../../src/point/solvePoint.js';
import { validateSpec } from '../../src/spec/spec.js';

// Two molecules with two levels and exchange V = 1 only: V swaps |1,0> and |0,1>, so the energies
// are -1, 0, 0, +1 and the ground state (|1,0> - |0,1>)/sqrt(2) is maximally entangled, entropy ln 2
// (textbook two-level algebra).
const dimer = validateSpec({
  chain: { sites: 2 },
  levels: { count: 2, tunnelling: 0 },
  exchange: { strength: 1 },
  solve: { states: 2, symmetries: 'none' },
});
const GiB = 2 ** 30;

describe('describePlan', () => {
  it('names the particles, the dimension, the storage, the arithmetic and every part of the memory estimate', () => {
    const plan = planPoint(dimer);
    const lines = describePlan(plan, GiB).split('\n');
    expect(lines[0]).toBe('particles        pinned, 2 sites x 2 levels');
    expect(lines[1]).toBe('basis dimension  4');
    expect(lines).toContain('arithmetic       real');
    expect(lines.find((l) => l.startsWith('memory estimate'))).toMatch(
      /^memory estimate {2}[\d.]+ \w+ \(limit 1\.00 GiB\)$/,
    );
    for (const part of Object.keys(plan.memory.parts)) expect(lines.some((l) => l.startsWith(`  ${part} `))).toBe(true);
  });

  it('lists the symmetries found and used', () => {
    const ring = validateSpec({ chain: { sites: 4, boundary: 'periodic' }, levels: { count: 2, tunnelling: 0.5 } });
    expect(describePlan(planPoint(ring), GiB)).toMatch(
      /^symmetries {7}translation, reflection, level_flip \(checked on the operator; solved sector by sector/m,
    );
  });
});

describe('describeRecord', () => {
  it('the dimer: energies -1 and 0, gap 1, entropy ln 2, every population one half', () => {
    const text = describeRecord(solvePoint(dimer).record);
    const lines = text.split('\n');
    expect(lines[0]).toMatch(/^pinned chain: 2 sites x 2 levels, dimension 4, dense \(\d+ products, [\d.e-]+ s\)$/);
    const header = lines.findIndex((l) => l.startsWith('state'));
    const energies = lines.slice(header + 2, header + 4).map((l) => l.split(/\s+/).slice(1, 3).map(Number));
    expect(energies).toEqual([
      [-1, 0],
      [0, 1],
    ]);
    expect(text).toMatch(/^gap 1 {3}ground-state degeneracy 1 /m);
    expect(text).toContain(`von Neumann ${Number(Math.LN2.toPrecision(8))}`);
    const populations = lines.filter((l) => /^[01] +0\.5 +0\.5 /.test(l));
    expect(populations).toHaveLength(2);
    expect(text).not.toContain('NOT CONVERGED');
  });

  it('sector labels as columns, n/a for a symmetry the model lacks', () => {
    const ring = validateSpec({ chain: { sites: 4, boundary: 'periodic' }, levels: { count: 2, tunnelling: 0.5 } });
    const text = describeRecord(solvePoint(ring).record);
    expect(text).toMatch(/^state +energy +E - E0 +residual +k \(2pi\/L\) +parity +flip +charge$/m);
    expect(text).toContain(`(${NOT_APPLICABLE}: the model has no such symmetry)`);
  });
});
