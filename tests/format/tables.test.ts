import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { PointRecord } from '../../src/point/solvePoint.js';
import { fmtNoise, fmtSmall, plural, ROUNDING_ZERO } from '../../src/format/tables.js';
import { describeRecord } from '../../src/point/describe.js';
import { axisLabels } from '../../src/output/sideBySide.js';
import { longText, summaryText } from '../../src/output/summary.js';
import type { ScanRunSummary } from '../../src/scan/scanRun.js';
import { runCli } from '../support/cli.js';

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-tables-'));

// A record as solve --json prints it: two copies of one level whose Lanczos energies differ by
// rounding (4.4e-15 on a scale of 6.6, the size of the difference of two doubles near 6.6 a few ulps
// apart), a residual of exactly 0, and sector labels with symmetries present and absent.
function record(): PointRecord {
  const e0 = -6.59575411273;
  return {
    energies: [e0, e0 + 4.440892098500626e-15, -6.07811602252],
    gap: 4.440892098500626e-15,
    observables: {
      populations: [
        [1 - 1e-17, 1e-17],
        [0.5, 0.5],
      ],
      level_mean: [1e-17, 0.5],
      spread: [1e-17, 0.25],
      string_width: 0.125,
      pair_separation: [],
    },
    basis: { kind: 'pinned', dimension: 4, sites: 2, levels: 2, operator: 'stored', nonzeros: 8 },
    solver: {
      method: 'lanczos',
      iterations: 1,
      restarts: 0,
      residuals: [0, 5.5e-15, 1.1e-14],
      converged: true,
      tolerance: 1e-9,
      degeneracy: 2,
      degeneracy_complete: true,
      seconds: 0.01,
      memory_estimate_bytes: 0,
    },
    sectors: [
      { momentum: 0, k: 0, parity: 1, level_flip: null, charge: 1 },
      { momentum: 1, k: Math.PI, parity: -1, level_flip: null, charge: 1 },
      { momentum: 1, k: Math.PI, parity: null, level_flip: -1, charge: null },
    ],
  };
}

/** The cells of the state table's row for state k (columns split on two or more spaces). */
function stateRow(text: string, k: number): string[] {
  const line = text.split('\n').find((l) => new RegExp(`^${k}\\s`).test(l))!;
  return line.trim().split(/\s{2,}/);
}

describe('readable tables', () => {
  it('quantum numbers as the JSON has them: +1, -1, and n/a for a symmetry the model does not have', () => {
    const text = describeRecord(record());
    expect(text).toMatch(/k \(2pi\/L\)\s+parity\s+flip\s+charge/);
    expect(stateRow(text, 0).slice(4)).toEqual(['0', '+1', 'n/a', '1']);
    expect(stateRow(text, 1).slice(4)).toEqual(['1', '-1', 'n/a', '1']);
    expect(stateRow(text, 2).slice(4)).toEqual(['1', 'n/a', '-1', 'n/a']);
    expect(text).toContain('(n/a: the model has no such symmetry)');
  });

  it('numbers that are zero to rounding print as 0, measured against their column', () => {
    const text = describeRecord(record());
    const [, , difference, residual] = stateRow(text, 1);
    expect(difference).toBe('0');
    expect(stateRow(text, 0)[3]).toBe('0'); // a residual of exactly 0
    expect(residual).toBe('5.5e-15'); // a residual is small by nature: it keeps its digits
    expect(text).toMatch(/^gap 0 /m);
    // Populations against 1, level moments against 1 or their column: 1e-17 is noise.
    const site0 = text.split('\n').find((l) => /^0\s+1\s/.test(l))!;
    expect(site0.trim().split(/\s+/)).toEqual(['0', '1', '0', '0', '0']);
    // The rule: |x| <= ROUNDING_ZERO * scale is 0; anything larger keeps its value.
    expect(fmtNoise(ROUNDING_ZERO * 6.6, 6.6)).toBe('0');
    expect(fmtNoise(1e-10, 6.6)).toBe('1.000e-10');
    expect(fmtNoise(-2.665e-15, 3)).toBe('0');
  });

  it('summary tables: a gap of 2.665e-15 beside E0 = -3 is 0, and so is a population of 1e-17', () => {
    const result = { ...record(), energies: [-3, -3 + 2.665e-15], gap: 2.665e-15 };
    const summary = {
      dir: 'run',
      manifest: {},
      section: { axes: [{ key: 'exchange.strength', values: [1] }], zip: false },
      rows: [
        {
          index: 0,
          params: { 'exchange.strength': 1 },
          status: 'done',
          record: {
            index: 0,
            params: { 'exchange.strength': 1 },
            status: 'done',
            result,
            iterations: 1,
            seconds: 0.01,
            warm_start: false,
            overlap_previous: null,
          },
        },
      ],
      counts: { total: 1, done: 1, failed: 0, pending: 0 },
      records: 1,
      fileBytes: 0,
      tornBytes: 0,
    } as unknown as ScanRunSummary;
    const row = summaryText(summary).split('\n')[2].trim().split(/\s+/);
    expect(row.slice(0, 5)).toEqual(['0', '1', 'done', '-3', '0']);
    const long = longText(summary)
      .split('\n')
      .filter((l) => /\spopulations\s/.test(l));
    expect(long.map((l) => l.trim().split(/\s+/).pop())).toEqual(['1', '0', '0.5', '0.5']);
  });

  it('counts and bounds read as English', () => {
    expect(plural(1, 'step')).toBe('1 step');
    expect(plural(2, 'step')).toBe('2 steps');
    expect(plural(0, 'product')).toBe('0 products');
    expect(fmtSmall(0)).toBe('0');
    expect(fmtSmall(3.21e-9)).toBe('3.21e-9');
  });

  it('evolve: "1 step", and an error bound of exactly zero prints as 0', () => {
    // Two molecules with no coupling at all: H = 0, one Krylov step of an invariant subspace, no error.
    const spec = path.join(tmp(), 'still.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 2\n[levels]\ncount = 2\ntunnelling = 0\n[evolve]\ninitial = [0, 1]\ntimes = [0, 0.5]\n',
    );
    const r = runCli(['evolve', spec]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/, 1 step, /);
    expect(r.stdout).toMatch(/error bound 0 \(/);
  });
});

describe('column names of summary --by: axis values to the precision the axis needs', () => {
  it('the fewest significant digits that tell the values apart and stay within 0.1% of each', () => {
    // 8 linear steps from 0.1 to 2: 0.1 + k 1.9/7. Four digits are the fewest that keep every value
    // within 0.1% (0.371428... is 0.371 at three, 0.12% off).
    const linear = Array.from({ length: 8 }, (_, k) => 0.1 + (k * 1.9) / 7);
    expect(axisLabels(linear)).toEqual(['0.1', '0.3714', '0.6429', '0.9143', '1.186', '1.457', '1.729', '2']);
    expect(axisLabels([0.236922215742493, 0.5])).toEqual(['0.237', '0.5']);
    // 0.25 at one digit would be 0.3: distinct from 4, but not the value.
    expect(axisLabels([0.25, 4])).toEqual(['0.25', '4']);
    expect(axisLabels([100, 100.5, 101])).toEqual(['100', '100.5', '101']);
    expect(axisLabels(['hardcore', 'boson'])).toEqual(['hardcore', 'boson']);
    expect(axisLabels([0, 1e-3])).toEqual(['0', '0.001']);
  });

  it('summary --by names its columns with those labels in text, CSV and JSON', () => {
    const dir = tmp();
    const spec = path.join(dir, 'line.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 2\n[levels]\ncount = 2\n[exchange]\nstrength = 1\n[solve]\nstates = 2\n[[scan.axis]]\nkey = "levels.count"\nvalues = [2, 3]\n[[scan.axis]]\nkey = "levels.tunnelling"\nfrom = 0.1\nto = 2\nsteps = 8\n',
    );
    const run = path.join(dir, 'run');
    expect(runCli(['scan', spec, '--out', run, '--workers', '1', '--quiet']).code).toBe(0);
    const header = runCli(['summary', run, '--by', 'levels.tunnelling', '--csv']).stdout.split('\n')[0].split(',');
    expect(header.slice(0, 4)).toEqual(['levels.count', 'E0[0.1]', 'E0[0.3714]', 'E0[0.6429]']);
    const [row] = JSON.parse(runCli(['summary', run, '--by', 'levels.tunnelling', '--json']).stdout);
    expect(row).toHaveProperty(['gap[1.186]']);
    expect(runCli(['summary', run, '--by', 'levels.tunnelling']).stdout).toMatch(/E0\[0\.1\]\s+E0\[0\.3714\]/);
  });
});
