// Ensemble summaries (issue 20): groups per combination of the other axes, the sample mean,
// standard deviation (n - 1) and standard error std / sqrt(n) (common practice), computed here by
// hand from the records, with failed and pending realizations counted and left out of the means.
import { describe, expect, it } from 'vitest';
import { ensembleCsv, ensembleGroups, ensembleJson, isEnsemble } from '../../src/output/ensemble.js';
import type { ScanRunSummary, SummaryRow } from '../../src/scan/scanRun.js';

function row(index: number, r: number, v: number, e0: number | null, status: SummaryRow['status']): SummaryRow {
  const params = { 'disorder.realization': r, 'exchange.strength': v };
  if (status === 'pending') return { index, params, status, record: null };
  const result =
    status === 'done'
      ? ({
          energies: [e0, (e0 as number) + 1],
          gap: 1,
          gap_above_ground: 1,
          observables: { string_width: 0.1 * r },
          basis: { dimension: 4 },
          solver: { converged: true },
        } as any)
      : undefined;
  return {
    index,
    params,
    status,
    record: {
      index,
      params,
      status,
      result,
      error: status === 'failed' ? 'Error: boom' : undefined,
      iterations: 1,
      seconds: 0,
      warm_start: false,
      overlap_previous: null,
      worker: 0,
      finished: '',
    },
  };
}

const E0 = [
  [-1.0, -1.5],
  [-2.0, -2.5],
  [-4.0, null],
  [null, -3.0],
];
const STATUS: SummaryRow['status'][][] = [
  ['done', 'done'],
  ['done', 'done'],
  ['done', 'failed'],
  ['pending', 'done'],
];
const rows: SummaryRow[] = [];
for (let r = 0; r < 4; r++)
  for (let k = 0; k < 2; k++) rows.push(row(2 * r + k, r, [0.5, 1][k], E0[r][k], STATUS[r][k]));
const summary = {
  dir: '',
  manifest: {} as any,
  section: {
    axes: [
      { key: 'disorder.realization', values: [0, 1, 2, 3], spacing: 'values' },
      { key: 'exchange.strength', values: [0.5, 1], spacing: 'values' },
    ],
    zip: false,
  },
  rows,
  counts: { total: 8, done: 6, failed: 1, pending: 1 },
  records: 7,
  fileBytes: 0,
  tornBytes: 0,
} as ScanRunSummary;

describe('ensemble summaries', () => {
  it('is an ensemble by its realization axis', () => expect(isEnsemble(summary)).toBe(true));
  it('groups by the other axes and counts done, failed and pending realizations', () => {
    const groups = ensembleGroups(summary);
    expect(groups.map((g) => g.params)).toEqual([{ 'exchange.strength': 0.5 }, { 'exchange.strength': 1 }]);
    expect(groups[0].realizations).toEqual({ total: 4, done: 3, failed: 0, pending: 1 });
    expect(groups[1].realizations).toEqual({ total: 4, done: 3, failed: 1, pending: 0 });
  });
  it('mean, sample standard deviation and standard error over the finished realizations', () => {
    const [g] = ensembleGroups(summary);
    const xs = [-1.0, -2.0, -4.0];
    const mean = (-1 - 2 - 4) / 3;
    const std = Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / 2);
    expect(g.stats.E0.n).toBe(3);
    expect(g.stats.E0.mean).toBeCloseTo(mean, 14);
    expect(g.stats.E0.std).toBeCloseTo(std, 14);
    expect(g.stats.E0.stderr).toBeCloseTo(std / Math.sqrt(3), 14);
    expect(g.stats.E1.mean).toBeCloseTo(mean + 1, 14);
    expect(g.stats.string_width.mean).toBeCloseTo((0 + 0.1 + 0.2) / 3, 14);
  });
  it('JSON and CSV hold every quantity', () => {
    const json = ensembleJson(summary);
    expect(Object.keys(json[0])).toEqual([
      'exchange.strength',
      'realizations',
      'E0',
      'E1',
      'gap',
      'gap_above_ground',
      'string_width',
    ]);
    const [header, first] = ensembleCsv(summary).split('\n');
    expect(header.split(',').slice(0, 9)).toEqual([
      'exchange.strength',
      'realizations',
      'done',
      'failed',
      'pending',
      'E0.mean',
      'E0.std',
      'E0.stderr',
      'E0.n',
    ]);
    expect(first.split(',').slice(0, 5)).toEqual(['0.5', '4', '3', '0', '1']);
  });
});
