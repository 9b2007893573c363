import { describe, expect, it } from 'vitest';
import { analyseScan, type AnalysisInput } from '../../../src/analysis/transitions.js';
import { renderReport } from '../../../src/output/report/report.js';
import { solvePoint } from '../../../src/point/solvePoint.js';
import { validateSpec } from '../../../src/spec/spec.js';

// The report draws the chosen point's level_correlation and pair_separation as site-by-site maps;
// each cell's tooltip carries the record's value.

function reportOf(strengths: number[], strip = false): string {
  const points: AnalysisInput['points'] = strengths.map((V, index) => {
    const record = solvePoint(
      validateSpec({
        chain: { sites: 4, boundary: 'periodic' },
        levels: { count: 3, tunnelling: 1 },
        exchange: { strength: V },
      }),
    ).record;
    if (strip) delete record.observables.level_correlation;
    return { index, params: { 'exchange.strength': V }, record, overlapPrevious: null };
  });
  const input: AnalysisInput = { axes: [{ key: 'exchange.strength', values: strengths }], zip: false, points };
  return renderReport({
    ...input,
    title: 't',
    about: [],
    analysis: analyseScan(input),
    energyUnitHz: null,
    chosenPoint: 1,
  });
}

/** The cells of one heat map: [row][col] values from their tooltips "x, y: value". */
function cells(html: string, id: string): Map<string, number> {
  const figure = new RegExp(`<figure class="plot-figure" id="${id}">([\\s\\S]*?)</figure>`).exec(html);
  expect(figure, id).not.toBeNull();
  const out = new Map<string, number>();
  for (const m of figure![1].matchAll(/<title>([^,]+), ([^:]+): ([^<]+)<\/title>/g))
    out.set(`${m[2]}|${m[1]}`, Number(m[3]));
  return out;
}

describe('the report draws level correlations of the chosen point', () => {
  it('level_correlation and pair_separation as site x site maps holding the record values', () => {
    const html = reportOf([0.5, 1.5, 2.5]);
    const record = solvePoint(
      validateSpec({
        chain: { sites: 4, boundary: 'periodic' },
        levels: { count: 3, tunnelling: 1 },
        exchange: { strength: 1.5 },
      }),
    ).record;
    for (const [id, values] of [
      ['level-correlation', record.observables.level_correlation!],
      ['pair-separation', record.observables.pair_separation],
    ] as const) {
      const map = cells(html, id);
      expect(map.size).toBe(16);
      for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) expect(map.get(`${i}|${j}`)).toBeCloseTo(values[i][j], 5);
    }
    expect(html).toContain('<section id="correlations">');
  });

  it('records without level_correlation still get the pair separation map', () => {
    const html = reportOf([0.5, 1.5], true);
    expect(html).not.toContain('id="level-correlation"');
    expect(html).toContain('id="pair-separation"');
  });
});
