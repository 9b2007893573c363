// A picture of the array (issue 19): each site a circle at its position, coloured by a per-site
// value on the heat maps' sequential scale, the hopping (nearest-neighbour) bonds as lines, and the
// vacancies as crosses. Positions are projected on the x-y plane and scaled uniformly (one scale
// for x and y, y upwards) to fill the plot. Bonds that cross a periodic boundary are not drawn (they
// would run across the whole picture); a note says how many.

import { fmt } from '../../format/tables.js';
import { geometryOf, type Geometry } from '../../model/model.js';
import { geometryBonds, latticeGeometry, pairIndex } from '../../model/lattice.js';
import { latticeOf } from '../../spec/lattice.js';
import type { Spec } from '../../spec/spec.js';
import { sequentialColour } from './colours.js';
import { esc, num } from './html.js';
import { PLOT_HEIGHT, PLOT_WIDTH } from './plotAxes.js';
import { colourBar } from './heatMap.js';

/** Where the sites of a point are: what the picture needs from its spec. */
export interface ArrayLayout {
  /** x, y, z per model site. */
  positions: number[][];
  /** Nearest-neighbour (or custom) bonds in model sites, i < j, and whether each crosses a periodic boundary. */
  bonds: { i: number; j: number; wraps: boolean }[];
  /** Positions of the vacant lattice sites. */
  vacancies: number[][];
  /** A plain chain (no vacancies): the report keeps its chain pages without a picture. */
  isChain: boolean;
}

/** The layout of a spec's sites, from the model's geometry. */
export function arrayLayout(spec: Spec): ArrayLayout {
  const geometry: Geometry = geometryOf(spec);
  const L = geometry.sites;
  const positions = Array.from({ length: L }, (_, i) => Array.from(geometry.positions.subarray(3 * i, 3 * i + 3)));
  const pairs = geometryBonds(geometry, 1);
  const bonds = Array.from({ length: pairs.count }, (_, k) => {
    const i = pairs.i[k];
    const j = pairs.j[k];
    return { i, j, wraps: geometry.wraps[pairIndex(i, j, L)] === 1 };
  });
  const lattice = latticeOf(spec);
  let vacancies: number[][] = [];
  if (lattice && lattice.vacancies.length > 0) {
    // The same lattice with every site present gives the vacant sites' positions.
    const full = latticeGeometry({ ...lattice, vacancies: [], bonds: null });
    vacancies = [...lattice.vacancies]
      .sort((a, b) => a - b)
      .map((s) => Array.from(full.positions.subarray(3 * s, 3 * s + 3)));
  }
  return { positions, bonds, vacancies, isChain: geometry.isChain };
}

export interface ArrayPicture {
  id: string;
  title: string;
  layout: ArrayLayout;
  /** One value per model site. */
  values: number[];
  valueLabel: string;
  /** Colour range; default the values' range. */
  range?: [number, number];
}

/** The figure: sites, bonds, vacancies and a colour bar, as inline SVG. */
export function renderArrayPicture(picture: ArrayPicture): string {
  const { layout, values } = picture;
  const finite = values.filter(Number.isFinite);
  const [lo, hi] = picture.range ?? [Math.min(...finite, 0), Math.max(...finite, 0)];
  const left = 24;
  const right = 92;
  const top = 18;
  const bottom = 18;
  const plotW = PLOT_WIDTH - left - right;
  const plotH = PLOT_HEIGHT - top - bottom;
  const everything = [...layout.positions, ...layout.vacancies];
  const xs = everything.map((p) => p[0]);
  const ys = everything.map((p) => p[1]);
  const [x0, x1] = [Math.min(...xs), Math.max(...xs)];
  const [y0, y1] = [Math.min(...ys), Math.max(...ys)];
  // Closest two points (sites or vacancies) in the plane: the circles must not overlap.
  let closest = Infinity;
  for (let a = 0; a < everything.length; a++)
    for (let b = a + 1; b < everything.length; b++) {
      const d = Math.hypot(everything[a][0] - everything[b][0], everything[a][1] - everything[b][1]);
      if (d > 1e-12) closest = Math.min(closest, d);
    }
  const pad = Number.isFinite(closest) ? closest / 2 : 1;
  const scale = Math.min(plotW / (x1 - x0 + 2 * pad), plotH / (y1 - y0 + 2 * pad));
  // Centred in the plot area.
  const cx = (x: number) => left + plotW / 2 + (x - (x0 + x1) / 2) * scale;
  const cy = (y: number) => top + plotH / 2 - (y - (y0 + y1) / 2) * scale;
  const radius = Math.min(16, Math.max(3, 0.32 * pad * 2 * scale));
  const t = (v: number) => (v - lo) / (hi - lo || 1);
  const bondLines = layout.bonds
    .filter((b) => !b.wraps)
    .map((b) => {
      const p = layout.positions[b.i];
      const q = layout.positions[b.j];
      return `<line class="bond" x1="${num(cx(p[0]))}" y1="${num(cy(p[1]))}" x2="${num(cx(q[0]))}" y2="${num(cy(q[1]))}"/>`;
    })
    .join('');
  const crossSize = radius * 0.7;
  const vacancyMarks = layout.vacancies
    .map((p) => {
      const X = cx(p[0]);
      const Y = cy(p[1]);
      return `<g class="vacancy" data-x="${num(X)}" data-y="${num(Y)}"><title>vacancy</title><circle cx="${num(X)}" cy="${num(Y)}" r="${num(radius)}" class="vacancy-ring"/><line x1="${num(X - crossSize)}" y1="${num(Y - crossSize)}" x2="${num(X + crossSize)}" y2="${num(Y + crossSize)}"/><line x1="${num(X - crossSize)}" y1="${num(Y + crossSize)}" x2="${num(X + crossSize)}" y2="${num(Y - crossSize)}"/></g>`;
    })
    .join('');
  const sites = layout.positions
    .map((p, i) => {
      const v = values[i];
      const fill = Number.isFinite(v) ? sequentialColour(t(v)) : '#ffffff';
      return `<circle class="site" data-site="${i}" data-value="${v}" cx="${num(cx(p[0]))}" cy="${num(cy(p[1]))}" r="${num(radius)}" fill="${fill}"><title>${esc(`site ${i}: ${Number.isFinite(v) ? fmt(v, 6) : 'no value'}`)}</title></circle>`;
    })
    .join('');
  const labels =
    layout.positions.length <= 64
      ? layout.positions
          .map(
            (p, i) =>
              `<text class="site-label" x="${num(cx(p[0]))}" y="${num(cy(p[1]) + radius + 10)}" text-anchor="middle">${i}</text>`,
          )
          .join('')
      : '';
  const bar = colourBar(picture.id, lo, hi, PLOT_WIDTH - right + 14, top, plotH);
  const notes: string[] = [];
  const wrapping = layout.bonds.filter((b) => b.wraps).length;
  if (wrapping > 0) notes.push(`${wrapping} bond${wrapping === 1 ? '' : 's'} across the periodic boundary not drawn`);
  if (everything.some((p) => Math.abs(p[2]) > 1e-12)) notes.push('sites drawn at their x, y (z left out)');
  return `<figure class="plot-figure" id="${esc(picture.id)}">
<figcaption>${esc(picture.title)}</figcaption>
<svg class="array-picture" data-plot="${esc(picture.id)}" data-scale="${scale}" viewBox="0 0 ${PLOT_WIDTH} ${PLOT_HEIGHT}" role="img" aria-label="${esc(picture.title)}">
${bar.defs}
<g class="bonds" stroke="#8a8a8a" stroke-width="1.5">${bondLines}</g>
<g class="vacancies" stroke="#94134c" stroke-width="1.5" fill="none">${vacancyMarks}</g>
<g class="sites" stroke="#333333" stroke-width="1">${sites}</g>${labels}
${bar.body}
<text transform="translate(${PLOT_WIDTH - 6} ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(picture.valueLabel)}</text>
</svg>
${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}
