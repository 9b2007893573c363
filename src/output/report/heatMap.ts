// Heat maps as inline SVG: a grid of cells on the sequential colour map, with a colour bar.
//
// Large grids stay light: at most MAX_CELLS cells per side (averaged bins).

import { fmt } from '../../format/tables.js';
import { sequentialColour } from './colours.js';
import { esc, num } from './html.js';
import { PLOT_HEIGHT, PLOT_WIDTH, niceTicks, tickText } from './plotAxes.js';

/** Cells per side of a heat map at most. */
export const MAX_CELLS = 80;

export interface HeatMap {
  id: string;
  title: string;
  xLabel: string;
  yLabel: string;
  xValues: number[];
  yValues: number[];
  /** z[row][col], row along y; NaN where missing. */
  z: number[][];
  zLabel: string;
  /** Fixed colour range (e.g. 0..1 for probabilities); default the data's range. */
  range?: [number, number];
  /** Write each cell's value inside it (small maps). */
  annotate?: boolean;
  notes?: string[];
}

/** Averages blocks of a grid so it has at most max cells per side. */
function binGrid(values: number[], z: number[][], axis: 'x' | 'y', max: number): { values: number[]; z: number[][] } {
  const n = values.length;
  if (n <= max) return { values, z };
  const size = Math.ceil(n / max);
  const groups: number[][] = [];
  for (let s = 0; s < n; s += size) groups.push(Array.from({ length: Math.min(size, n - s) }, (_, k) => s + k));
  const mean = (xs: number[]) => {
    const f = xs.filter(Number.isFinite);
    return f.length ? f.reduce((a, b) => a + b, 0) / f.length : NaN;
  };
  const newValues = groups.map((g) => mean(g.map((k) => values[k])));
  if (axis === 'y') return { values: newValues, z: groups.map((g) => z[0].map((_, c) => mean(g.map((r) => z[r][c])))) };
  return { values: newValues, z: z.map((row) => groups.map((g) => mean(g.map((c) => row[c])))) };
}

export function renderHeatMap(map: HeatMap): string {
  const notes = [...(map.notes ?? [])];
  let { xValues, yValues, z } = map;
  if (xValues.length > MAX_CELLS || yValues.length > MAX_CELLS) {
    notes.push(`${yValues.length} x ${xValues.length} grid averaged into at most ${MAX_CELLS} cells per side`);
    ({ values: xValues, z } = binGrid(xValues, z, 'x', MAX_CELLS));
    ({ values: yValues, z } = binGrid(yValues, z, 'y', MAX_CELLS));
  }
  const finite = z.flat().filter(Number.isFinite);
  if (finite.length === 0) return '';
  const [lo, hi] = map.range ?? [Math.min(...finite), Math.max(...finite)];
  const left = 70;
  const right = 92;
  const top = 14;
  const bottom = 46;
  const plotW = PLOT_WIDTH - left - right;
  const plotH = PLOT_HEIGHT - top - bottom;
  const cw = plotW / xValues.length;
  const ch = plotH / yValues.length;
  const titles = xValues.length * yValues.length <= 2500;
  const cells: string[] = [];
  yValues.forEach((yv, r) => {
    xValues.forEach((xv, c) => {
      const v = z[r][c];
      const X = num(left + c * cw);
      // Row 0 at the bottom, as on a y axis.
      const Y = num(top + plotH - (r + 1) * ch);
      const fill = Number.isFinite(v) ? sequentialColour((v - lo) / (hi - lo || 1)) : '#ffffff';
      const title = titles
        ? `<title>${esc(`${fmt(xv, 5)}, ${fmt(yv, 5)}: ${Number.isFinite(v) ? fmt(v, 6) : 'no value'}`)}</title>`
        : '';
      const text =
        map.annotate && Number.isFinite(v)
          ? `<text x="${num(left + (c + 0.5) * cw)}" y="${num(top + plotH - (r + 0.5) * ch)}" class="cell-text" text-anchor="middle" dominant-baseline="middle" fill="${(v - lo) / (hi - lo || 1) > 0.55 ? '#000000' : '#ffffff'}">${esc(fmt(v, 2))}</text>`
          : '';
      cells.push(
        `<rect class="cell" x="${X}" y="${Y}" width="${num(cw + 0.3)}" height="${num(ch + 0.3)}" fill="${fill}">${title}</rect>${text}`,
      );
    });
  });
  const labelsEvery = (n: number, room: number) => Math.max(1, Math.ceil(n / Math.max(1, Math.floor(room))));
  const xEvery = labelsEvery(xValues.length, plotW / 44);
  const yEvery = labelsEvery(yValues.length, plotH / 16);
  const ticks: string[] = [];
  xValues.forEach((v, c) => {
    if (c % xEvery === 0)
      ticks.push(
        `<text x="${num(left + (c + 0.5) * cw)}" y="${PLOT_HEIGHT - bottom + 16}" class="tick" text-anchor="middle">${esc(fmt(v, 4))}</text>`,
      );
  });
  yValues.forEach((v, r) => {
    if (r % yEvery === 0)
      ticks.push(
        `<text x="${left - 6}" y="${num(top + plotH - (r + 0.5) * ch)}" class="tick" text-anchor="end" dominant-baseline="middle">${esc(fmt(v, 4))}</text>`,
      );
  });
  // Colour bar with its own ticks.
  const barX = PLOT_WIDTH - right + 14;
  const barW = 14;
  const gradientId = `grad-${map.id}`;
  const stops = Array.from(
    { length: 11 },
    (_, k) => `<stop offset="${k * 10}%" stop-color="${sequentialColour(k / 10)}"/>`,
  ).join('');
  const bt = niceTicks(lo, hi, 4);
  const barTicks = bt.ticks
    .filter((t) => t >= lo - 1e-12 && t <= hi + 1e-12)
    .map((t) => {
      const Y = num(top + plotH - ((t - lo) / (hi - lo || 1)) * plotH);
      return `<line x1="${barX + barW}" y1="${Y}" x2="${barX + barW + 4}" y2="${Y}" class="axis"/><text x="${barX + barW + 6}" y="${Y}" class="tick" dominant-baseline="middle">${esc(tickText(t, bt.step))}</text>`;
    })
    .join('');
  return `<figure class="plot-figure" id="${esc(map.id)}">
<figcaption>${esc(map.title)}</figcaption>
<svg class="heatmap" data-plot="${esc(map.id)}" data-rows="${yValues.length}" data-cols="${xValues.length}" viewBox="0 0 ${PLOT_WIDTH} ${PLOT_HEIGHT}" role="img" aria-label="${esc(map.title)}">
<defs><linearGradient id="${gradientId}" x1="0" y1="1" x2="0" y2="0">${stops}</linearGradient></defs>
${cells.join('')}${ticks.join('')}
<rect x="${barX}" y="${top}" width="${barW}" height="${plotH}" fill="url(#${gradientId})" class="colour-bar"/>${barTicks}
<text x="${num((left + left + plotW) / 2)}" y="${PLOT_HEIGHT - 8}" class="axis-label" text-anchor="middle">${esc(map.xLabel)}</text>
<text transform="translate(14 ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.yLabel)}</text>
<text transform="translate(${PLOT_WIDTH - 6} ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.zLabel)}</text>
</svg>
${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}
