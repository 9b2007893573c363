import { describe, expect, it } from 'vitest';
import { analyseScan, type AnalysisInput } from '../../../src/analysis/transitions.js';
import { renderReport } from '../../../src/output/report/report.js';
import { solvePoint } from '../../../src/point/solvePoint.js';
import { validateSpec } from '../../../src/spec/spec.js';

// The populations panel draws one point per site; on a ring every site is alike (translation
// symmetry, common practice), so by default the panel moves to a point where sites differ, or says
// that none does.

function reportOver(boundaries: ('open' | 'periodic')[], chosenPoint?: number): string {
  const points: AnalysisInput['points'] = boundaries.map((boundary, index) => ({
    index,
    params: { 'chain.boundary': boundary },
    record: solvePoint(
      validateSpec({
        chain: { sites: 4, boundary },
        levels: { count: 3, tunnelling: 1 },
        exchange: { strength: 2 },
      }),
    ).record,
    overlapPrevious: null,
  }));
  const input: AnalysisInput = { axes: [{ key: 'chain.boundary', values: boundaries }], zip: false, points };
  return renderReport({
    ...input,
    title: 't',
    about: [],
    analysis: analyseScan(input),
    energyUnitHz: null,
    chosenPoint,
  });
}

const panelTitle = (html: string) => /level populations per site at point (\d+)/.exec(html)?.[1];

describe('the populations panel', () => {
  it('moves from a point where every site is alike to the nearest where sites differ', () => {
    // Without a numeric axis the default is the middle point (index 1, the ring).
    const html = reportOver(['open', 'periodic', 'periodic']);
    expect(panelTitle(html)).toBe('0');
    expect(html).toContain('nearest to point 1');
  });

  it('says so when every site is alike at every point', () => {
    const html = reportOver(['periodic', 'periodic']);
    expect(panelTitle(html)).toBe('1');
    expect(html).toContain('every site has the same populations at every point');
  });

  it('keeps a requested point even where every site is alike', () => {
    expect(panelTitle(reportOver(['open', 'periodic', 'periodic'], 2))).toBe('2');
  });
});
