// Per-kind particle settings: [particles.<kind>] tables apply only when that kind is chosen, so one
// scan over particles.kind can compare every kind at the same on-site repulsion.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { SpecError } from '../../src/errors/errors.js';
import { parseSpecText, validateSpec } from '../../src/spec/spec.js';
import { runCli } from '../support/cli.js';

const base = { chain: { sites: 4 }, levels: { count: 2 } };

function specErrorOf(raw: Record<string, unknown>): SpecError {
  try {
    validateSpec(structuredClone(raw));
  } catch (e) {
    if (e instanceof SpecError) return e;
    throw e;
  }
  throw new Error(`expected a SpecError for ${JSON.stringify(raw)}`);
}

describe('[particles.<kind>] tables', () => {
  const particles = { number: 3, hopping: 1, boson: { onsite: 4, max_per_site: 2 }, fermion: { hopping: 0.5 } };

  it('apply only to their kind, over [particles]', () => {
    const as = (kind: string) =>
      validateSpec({ ...structuredClone(base), particles: { ...structuredClone(particles), kind } }).particles;
    expect(as('boson')).toEqual({ kind: 'boson', number: 3, maxPerSite: 2, hopping: 1, onsite: 4 });
    expect(as('hardcore')).toEqual({ kind: 'hardcore', number: 3, maxPerSite: 1, hopping: 1, onsite: 0 });
    expect(as('fermion')).toEqual({ kind: 'fermion', number: 3, maxPerSite: 2, hopping: 0.5, onsite: 0 });
  });

  it('read the same from TOML sub-tables', () => {
    const raw = parseSpecText(
      '[chain]\nsites = 4\n[levels]\ncount = 2\n[particles]\nkind = "boson"\nhopping = 1\n[particles.boson]\nonsite = 4\n',
      'toml',
    );
    expect(validateSpec(raw).particles.onsite).toBe(4);
  });

  it('are checked whether their kind is chosen or not, naming the key path', () => {
    const withTable = (kindTable: string, table: unknown) => ({
      ...structuredClone(base),
      particles: { kind: 'hardcore', [kindTable]: table },
    });
    expect(specErrorOf(withTable('hardcore', { onsite: 4 })).keyPath).toBe('particles.hardcore.onsite');
    expect(specErrorOf(withTable('boson', { onsit: 4 })).message).toMatch(
      /^particles\.boson\.onsit: unknown key \(did you mean onsite\?\)/,
    );
    expect(specErrorOf(withTable('boson', { onsite: 'four' })).keyPath).toBe('particles.boson.onsite');
    expect(specErrorOf(withTable('boson', { kind: 'fermion' })).keyPath).toBe('particles.boson.kind');
    expect(specErrorOf(withTable('boson', 4)).keyPath).toBe('particles.boson');
    expect(specErrorOf(withTable('pinned', { hopping: 1 })).keyPath).toBe('particles.pinned.hopping');
    // A value that is wrong only for the chosen kind names the table it came from.
    expect(
      specErrorOf({ ...structuredClone(base), particles: { kind: 'boson', boson: { number: 9, max_per_site: 2 } } })
        .keyPath,
    ).toBe('particles.boson.number');
  });

  it('a key of [particles] that the kind cannot use points to the kind tables', () => {
    const e = specErrorOf({ ...structuredClone(base), particles: { kind: 'hardcore', onsite: 4 } });
    expect(e.keyPath).toBe('particles.onsite');
    expect(e.message).toContain('[particles.boson]');
  });
});

describe('comparing kinds at finite U in one scan', () => {
  // Two particles on two sites with one level: the Bose-Hubbard dimer. In the basis |2,0>, |1,1>,
  // |0,2> the symmetric sector is [[U, -2t], [-2t, 0]], so E0 = U/2 - sqrt(U^2/4 + 4t^2) (textbook
  // two-site Hubbard algebra); hard-core bosons and spinless fermions have the single state |1,1>, E0 = 0.
  it('summary --by particles.kind shows every kind, bosons at U = 4', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-kinds-'));
    const spec = path.join(dir, 'kinds.toml');
    writeFileSync(
      spec,
      `[chain]\nsites = 2\n[levels]\ncount = 1\n[particles]\nkind = "hardcore"\nnumber = 2\nhopping = 1.0\n[particles.boson]\nonsite = 4.0\n` +
        `[[scan.axis]]\nkey = "particles.kind"\nvalues = ["hardcore", "boson", "fermion"]\n`,
    );
    const run = path.join(dir, 'run');
    const scan = runCli(['scan', spec, '--out', run, '--workers', '1', '--quiet']);
    expect(scan.stderr).toBe('');
    expect(scan.code).toBe(0);
    const summary = runCli(['summary', run, '--by', 'particles.kind', '--json']);
    expect(summary.code).toBe(0);
    const [row] = JSON.parse(summary.stdout);
    const U = 4;
    const t = 1;
    expect(row['E0[boson]']).toBeCloseTo(U / 2 - Math.sqrt((U * U) / 4 + 4 * t * t), 10);
    expect(row['E0[hardcore]']).toBeCloseTo(0, 10);
    expect(row['E0[fermion]']).toBeCloseTo(0, 10);
  });
});
