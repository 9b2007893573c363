// The report's picture of the array (issue 19): one circle per occupied site at its position, under
// one uniform scale with y upwards; crosses at the vacancies; the nearest-neighbour bonds that do not
// cross a periodic boundary; each site's colour the heat maps' sequential scale at its value, so a
// larger value is lighter (colours.ts: the scale's lightness rises monotonically). Positions, bonds
// and vacancies come from the documented geometry worked out in tests/support/latticeReference.ts.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { arrayLayout, renderArrayPicture } from '../../../src/output/report/arrayPicture.js';
import { hexToLab, sequentialColour } from '../../../src/output/report/colours.js';
import { validateSpec } from '../../../src/spec/spec.js';
import { referencePair, referenceSites, type LatticeRaw } from '../../support/latticeReference.js';
import { rng } from '../../support/random.js';
import { runCli } from '../../support/cli.js';

interface Circle {
  site: number;
  value: number;
  x: number;
  y: number;
  fill: string;
}

function circles(svg: string): Circle[] {
  return [
    ...svg.matchAll(
      /<circle class="site" data-site="(\d+)" data-value="([^"]+)" cx="([^"]+)" cy="([^"]+)" r="[^"]+" fill="([^"]+)"/g,
    ),
  ].map((m) => ({ site: Number(m[1]), value: Number(m[2]), x: Number(m[3]), y: Number(m[4]), fill: m[5] }));
}

const vacancyMarks = (svg: string) =>
  [...svg.matchAll(/<g class="vacancy" data-x="([^"]+)" data-y="([^"]+)"/g)].map((m) => [Number(m[1]), Number(m[2])]);
const bondCount = (svg: string) => (svg.match(/<line class="bond"/g) ?? []).length;

/** Every vacancy's position by the documented order (the lattice with nothing removed). */
function vacancyPositions(l: LatticeRaw): number[][] {
  const full = referenceSites({ ...l, vacancies: [] });
  return (l.vacancies ?? []).map((s) => full.xyz[s]);
}

const LATTICES: LatticeRaw[] = [
  { shape: 'square', size: [3, 3], boundary: ['open', 'open'], vacancies: [4] },
  { shape: 'square', size: [4, 3], boundary: ['periodic', 'open'], spacing: [1, 1.4] },
  { shape: 'triangular', size: [3, 3], boundary: ['open', 'open'], vacancies: [0, 7] },
  { shape: 'triangular', size: [3, 3], boundary: ['periodic', 'periodic'] },
  { shape: 'ladder', size: [4], boundary: ['open', 'open'] },
  {
    shape: 'custom',
    positions: [
      [0, 0],
      [1.3, 0.2],
      [0.4, 1.1],
      [2.2, 1.5],
      [1, 2.4],
    ],
    vacancies: [2],
  },
];

describe('the picture of the array', () => {
  it.each(LATTICES.map((l, k) => [l.shape, k, l] as const))('%s (case %i)', (_, k, lattice) => {
    const spec = validateSpec({ lattice, levels: { count: 3 } });
    const ref = referenceSites(lattice);
    const L = ref.xyz.length;
    const r = rng(60 + k);
    const values = Array.from({ length: L }, () => 2 * r());
    const svg = renderArrayPicture({
      id: 'a',
      title: 't',
      layout: arrayLayout(spec),
      values,
      valueLabel: 'v',
      range: [0, 2],
    });
    const got = circles(svg);
    // One circle per occupied site, in site order, carrying its value.
    expect(got.map((c) => c.site)).toEqual(Array.from({ length: L }, (_, i) => i));
    got.forEach((c, i) => expect(c.value).toBe(values[i]));
    // Centres: X = a + s x, Y = b - s y with one s > 0 for every site (uniform scale, y up); the SVG
    // rounds coordinates to 0.01 pixel.
    const far = ref.xyz.reduce(
      (best, p, i) =>
        Math.hypot(p[0] - ref.xyz[0][0], p[1] - ref.xyz[0][1]) >
        Math.hypot(ref.xyz[best][0] - ref.xyz[0][0], ref.xyz[best][1] - ref.xyz[0][1])
          ? i
          : best,
      0,
    );
    const s =
      Math.hypot(got[far].x - got[0].x, got[far].y - got[0].y) /
      Math.hypot(ref.xyz[far][0] - ref.xyz[0][0], ref.xyz[far][1] - ref.xyz[0][1]);
    expect(s).toBeGreaterThan(10);
    const a = got[0].x - s * ref.xyz[0][0];
    const b = got[0].y + s * ref.xyz[0][1];
    const place = (p: number[]) => [a + s * p[0], b - s * p[1]];
    got.forEach((c, i) => {
      const [X, Y] = place(ref.xyz[i]);
      expect(Math.abs(c.x - X)).toBeLessThan(0.05);
      expect(Math.abs(c.y - Y)).toBeLessThan(0.05);
    });
    // Vacancies: one cross each, under the same map.
    const marks = vacancyMarks(svg);
    const vacant = vacancyPositions(lattice);
    expect(marks).toHaveLength(vacant.length);
    vacant.forEach((p, v) => {
      const [X, Y] = place(p);
      expect(Math.abs(marks[v][0] - X)).toBeLessThan(0.05);
      expect(Math.abs(marks[v][1] - Y)).toBeLessThan(0.05);
    });
    // Bonds: the nearest pairs by the minimum image (docs/model.md), less those whose direct
    // separation is longer than their image (they cross the periodic boundary).
    let shortest = Infinity;
    const field = [0, 0, 1];
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++)
        shortest = Math.min(shortest, referencePair(ref.xyz[i], ref.xyz[j], ref.boxes, field).r);
    let direct = 0;
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++) {
        const { r: d } = referencePair(ref.xyz[i], ref.xyz[j], ref.boxes, field);
        const straight = Math.hypot(...[0, 1, 2].map((c) => ref.xyz[j][c] - ref.xyz[i][c]));
        if (d - shortest <= 1e-9 * shortest && straight - d <= 1e-9 * d) direct++;
      }
    expect(bondCount(svg)).toBe(direct);
    // Colours: the sequential scale at the value's place in the range; lightness follows the value.
    got.forEach((c, i) => expect(c.fill).toBe(sequentialColour(values[i] / 2)));
    const byValue = [...got].sort((u, w) => u.value - w.value);
    for (let q = 1; q < byValue.length; q++)
      // Values a twentieth of the range apart: well beyond the 8-bit rounding of the colours.
      if (byValue[q].value > byValue[q - 1].value + 0.1)
        expect(hexToLab(byValue[q].fill)[0]).toBeGreaterThan(hexToLab(byValue[q - 1].fill)[0]);
  });
});

describe('the scan report draws it at the populations point, and not for chains', () => {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-picture-'));
  const body = `
[levels]
count = 3
tunnelling = 0.6
detuning = [0, 0.3, 0.7]

[exchange]
strength = 1
range = "dipolar"

[solve]
states = 1

[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1.5]
`;
  const reportOf = (name: string, geometry: string) => {
    writeFileSync(path.join(dir, `${name}.toml`), geometry + body);
    const run = path.join(dir, name);
    expect(runCli(['scan', path.join(dir, `${name}.toml`), '--out', run, '--quiet']).code).toBe(0);
    const html = path.join(dir, `${name}.html`);
    expect(runCli(['report', run, '--out', html, '--point', '1']).code).toBe(0);
    const json = JSON.parse(runCli(['summary', run, '--json']).stdout) as {
      index: number;
      observables: { level_mean: number[] };
    }[];
    return { page: readFileSync(html, 'utf8'), levelMean: json.find((p) => p.index === 1)!.observables.level_mean };
  };

  it("a 2D array with a vacancy: one circle per site with the point's level_mean, one cross", () => {
    const { page, levelMean } = reportOf(
      'square',
      '[lattice]\nshape = "square"\nsize = [3, 2]\nvacancies = [1]\nfield = [1, 0, 1]\n',
    );
    const svg = /<svg class="array-picture"[\s\S]*?<\/svg>/.exec(page)?.[0] ?? '';
    expect(svg).not.toBe('');
    const got = circles(svg);
    expect(got).toHaveLength(5);
    got.forEach((c, i) => expect(c.value).toBe(levelMean[i]));
    // The full ladder 0..N-1 is the colour range.
    got.forEach((c, i) => expect(c.fill).toBe(sequentialColour(levelMean[i] / 2)));
    expect(vacancyMarks(svg)).toHaveLength(1);
    // In the populations section, after the heat map.
    expect(page.indexOf('id="array-picture"')).toBeGreaterThan(page.indexOf('id="populations"'));
  });

  it('a chain keeps its report without a picture', () => {
    const { page } = reportOf('chain', '[chain]\nsites = 4\n');
    expect(page).not.toContain('class="array-picture"');
  });
});
