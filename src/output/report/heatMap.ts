// Heat maps as inline SVG: a grid of cells on the sequential colour map, with a colour bar.
//
// Large grids stay light: at most MAX_CELLS cells per side (averaged bins). Cells sit side by side in
// the order of their values, or, on a log axis (a log-spaced scan), at their log10 positions, each
// reaching halfway to its neighbours, with ticks at round values.

import { fmt } from '../../format/tables.js';
import { sequentialColour } from './colours.js';
import { esc, num } from './html.js';
import { PLOT_HEIGHT, PLOT_WIDTH, logTicks, niceTicks, tickText } from './plotAxes.js';

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
  /** Place the columns (x) or rows (y) at log10 of their values, which must be increasing and positive. */
  logX?: boolean;
  logY?: boolean;
}

/** Where one side's cells go: n + 1 edges as fractions of the side, and the ticks with their text. */
interface CellAxis {
  edges: number[];
  ticks: { at: number; text: string }[];
  log: boolean;
}

/** Cells side by side in value order, a label under every `every`-th. */
function indexAxis(values: number[], every: number): CellAxis {
  const n = values.length;
  return {
    edges: Array.from({ length: n + 1 }, (_, i) => i / n),
    ticks: values.flatMap((v, i) => (i % every === 0 ? [{ at: (i + 0.5) / n, text: fmt(v, 4) }] : [])),
    log: false,
  };
}

/** Cells centred on log10 of their values, each reaching halfway to its neighbours (the end ones as far out). */
function logAxis(values: number[]): CellAxis {
  const logs = values.map(Math.log10);
  const n = logs.length;
  const firstStep = n === 1 ? 1 : logs[1] - logs[0];
  const lastStep = n === 1 ? 1 : logs[n - 1] - logs[n - 2];
  const bounds = [
    logs[0] - firstStep / 2,
    ...logs.slice(1).map((l, i) => (l + logs[i]) / 2),
    logs[n - 1] + lastStep / 2,
  ];
  const lo = bounds[0];
  const span = bounds[n] - lo;
  const at = (l: number) => (l - lo) / span;
  return {
    edges: bounds.map(at),
    ticks: logTicks(10 ** bounds[0], 10 ** bounds[n]).map((t) => ({ at: at(Math.log10(t)), text: tickText(t, t) })),
    log: true,
  };
}

/** A log axis when asked for and every value is positive and increasing; else cells in value order. */
function cellAxis(values: number[], log: boolean | undefined, every: number): CellAxis {
  const usable = log === true && values.every((v, i) => v > 0 && (i === 0 || v > values[i - 1]));
  return usable ? logAxis(values) : indexAxis(values, every);
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

/**
 * A vertical colour bar on the sequential scale from `lo` (bottom) to `hi` (top), with ticks: its
 * gradient for the SVG's <defs> and the bar itself. Shared by heat maps and array pictures.
 */
export function colourBar(
  id: string,
  lo: number,
  hi: number,
  barX: number,
  top: number,
  plotH: number,
): { defs: string; body: string } {
  const barW = 14;
  const gradientId = `grad-${id}`;
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
  return {
    defs: `<defs><linearGradient id="${gradientId}" x1="0" y1="1" x2="0" y2="0">${stops}</linearGradient></defs>`,
    body: `<rect x="${barX}" y="${top}" width="${barW}" height="${plotH}" fill="url(#${gradientId})" class="colour-bar"/>${barTicks}`,
  };
}

export function renderHeatMap(map: HeatMap): string {
  const notes = [...(map.notes ?? [])];
  let { xValues, yValues, z } = map;
  if (xValues.length > MAX_CELLS || yValues.length > MAX_CELLS) {
    notes.push(`${yValues.length} x ${xValues.length} grid averaged into at most ${MAX_CELLS} cells per side`);
    // A log axis' bins sit at the mean of their log10 values.
    const into = (log: boolean | undefined, v: number[]) => (log && v.every((x) => x > 0) ? v.map(Math.log10) : v);
    const back = (log: boolean | undefined, before: number[], v: number[]) =>
      log && before.every((x) => x > 0) ? v.map((l) => 10 ** l) : v;
    let binned: number[];
    ({ values: binned, z } = binGrid(into(map.logX, xValues), z, 'x', MAX_CELLS));
    xValues = back(map.logX, xValues, binned);
    ({ values: binned, z } = binGrid(into(map.logY, yValues), z, 'y', MAX_CELLS));
    yValues = back(map.logY, yValues, binned);
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
  const labelsEvery = (n: number, room: number) => Math.max(1, Math.ceil(n / Math.max(1, Math.floor(room))));
  const xAxis = cellAxis(xValues, map.logX, labelsEvery(xValues.length, plotW / 44));
  const yAxis = cellAxis(yValues, map.logY, labelsEvery(yValues.length, plotH / 16));
  const titles = xValues.length * yValues.length <= 2500;
  const cells: string[] = [];
  yValues.forEach((yv, r) => {
    // Row 0 at the bottom, as on a y axis.
    const yTop = top + plotH * (1 - yAxis.edges[r + 1]);
    const ch = plotH * (yAxis.edges[r + 1] - yAxis.edges[r]);
    xValues.forEach((xv, c) => {
      const v = z[r][c];
      const xLeft = left + plotW * xAxis.edges[c];
      const cw = plotW * (xAxis.edges[c + 1] - xAxis.edges[c]);
      const fill = Number.isFinite(v) ? sequentialColour((v - lo) / (hi - lo || 1)) : '#ffffff';
      const title = titles
        ? `<title>${esc(`${fmt(xv, 5)}, ${fmt(yv, 5)}: ${Number.isFinite(v) ? fmt(v, 6) : 'no value'}`)}</title>`
        : '';
      const text =
        map.annotate && Number.isFinite(v)
          ? `<text x="${num(xLeft + cw / 2)}" y="${num(yTop + ch / 2)}" class="cell-text" text-anchor="middle" dominant-baseline="middle" fill="${(v - lo) / (hi - lo || 1) > 0.55 ? '#000000' : '#ffffff'}">${esc(fmt(v, 2))}</text>`
          : '';
      cells.push(
        `<rect class="cell" x="${num(xLeft)}" y="${num(yTop)}" width="${num(cw + 0.3)}" height="${num(ch + 0.3)}" fill="${fill}">${title}</rect>${text}`,
      );
    });
  });
  const ticks: string[] = [];
  for (const t of xAxis.ticks)
    ticks.push(
      `<text x="${num(left + plotW * t.at)}" y="${PLOT_HEIGHT - bottom + 16}" class="tick" text-anchor="middle">${esc(t.text)}</text>`,
    );
  for (const t of yAxis.ticks)
    ticks.push(
      `<text x="${left - 6}" y="${num(top + plotH * (1 - t.at))}" class="tick" text-anchor="end" dominant-baseline="middle">${esc(t.text)}</text>`,
    );
  const bar = colourBar(map.id, lo, hi, PLOT_WIDTH - right + 14, top, plotH);
  return `<figure class="plot-figure" id="${esc(map.id)}">
<figcaption>${esc(map.title)}</figcaption>
<svg class="heatmap" data-plot="${esc(map.id)}" data-rows="${yValues.length}" data-cols="${xValues.length}" data-x-scale="${xAxis.log ? 'log' : 'ordered'}" data-y-scale="${yAxis.log ? 'log' : 'ordered'}" viewBox="0 0 ${PLOT_WIDTH} ${PLOT_HEIGHT}" role="img" aria-label="${esc(map.title)}">
${bar.defs}
${cells.join('')}${ticks.join('')}
${bar.body}
<text x="${num((left + left + plotW) / 2)}" y="${PLOT_HEIGHT - 8}" class="axis-label" text-anchor="middle">${esc(map.xLabel)}</text>
<text transform="translate(14 ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.yLabel)}</text>
<text transform="translate(${PLOT_WIDTH - 6} ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.zLabel)}</text>
</svg>
${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}
