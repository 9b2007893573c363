// Line plots as inline SVG: a line (or points with error bars) per series and diamond marks.
//
// Large scans stay light: a plot draws at most MAX_SERIES lines (evenly chosen, the rest named in a
// note), each thinned to at most MAX_POINTS vertices by keeping every bucket's extremes.

import { esc, num } from './html.js';
import { legendSwatch, markerPath, styleOf } from './lineStyles.js';
import { PLOT_HEIGHT, PLOT_WIDTH, logTicks, niceTicks, tickText } from './plotAxes.js';
import { MAX_POINTS, decimate, evenlyChosen } from './thinning.js';

/** Lines drawn in one plot at most. */
export const MAX_SERIES = 10;

export interface PlotSeries {
  name: string;
  x: number[];
  y: number[];
  /** Symmetric error bars on y (fits). */
  yErr?: (number | null)[];
  /** Draw the points only, no joining line. */
  pointsOnly?: boolean;
  /** Palette slot; defaults to the series' position. */
  style?: number;
}

export interface PlotMark {
  x: number;
  y: number;
  /** Half-width of a horizontal error bar. */
  xErr?: number;
  yErr?: number;
  label: string;
  style: number;
  /** Drawn hollow: e.g. a peak at the end of the scan. */
  hollow?: boolean;
}

export interface LinePlot {
  id: string;
  title: string;
  xLabel: string;
  yLabel: string;
  series: PlotSeries[];
  marks?: PlotMark[];
  notes?: string[];
  /** Include x = 0 in the range (fits extrapolate there). */
  includeZeroX?: boolean;
  /** Draw x on a log scale (a log-spaced scan axis); ignored when some x is not positive. */
  logX?: boolean;
  /** Rounding of the y values in absolute terms: a curve that varies less is drawn flat (a conserved energy of 0). */
  yNoise?: number;
}

/** Margins around the plot area: room for the tick labels and the axis titles. */
const M = { left: 70, right: 16, top: 14, bottom: 46 };

/** A log x axis over the data's range, with its ticks (the step is unused: each tick's text follows its own size). */
function logAxis(lo: number, hi: number): { ticks: number[]; step: number; lo: number; hi: number } {
  // A single x value still needs a range: a factor of 1.25 either side.
  if (!(hi > lo)) return logAxis(lo / 1.25, hi * 1.25);
  return { ticks: logTicks(lo, hi), step: 1, lo, hi };
}

export function renderLinePlot(plot: LinePlot): string {
  const notes = [...(plot.notes ?? [])];
  let series = plot.series.filter((s) => s.x.length > 0);
  if (series.length > MAX_SERIES) {
    notes.push(`showing ${MAX_SERIES} of ${series.length} lines, evenly chosen`);
    series = evenlyChosen(series, MAX_SERIES);
  }
  const drawn = series.map((s, k) => {
    const finite = s.x.map((_, i) => i).filter((i) => Number.isFinite(s.x[i]) && Number.isFinite(s.y[i]));
    const x = finite.map((i) => s.x[i]);
    const y = finite.map((i) => s.y[i]);
    const yErr = s.yErr ? finite.map((i) => s.yErr![i] ?? null) : undefined;
    const thin = s.pointsOnly || yErr ? { x, y } : decimate(x, y);
    return { ...s, x: thin.x, y: thin.y, yErr, slot: s.style ?? k, total: x.length };
  });
  const thinned = drawn.filter((s) => s.x.length < s.total);
  if (thinned.length > 0) {
    const most = Math.max(...thinned.map((s) => s.total));
    notes.push(
      `${thinned.length === drawn.length ? 'every line' : `${thinned.length} lines`} thinned to at most ${MAX_POINTS} of up to ${most} points, keeping the extremes of each stretch`,
    );
  }
  const marks = plot.marks ?? [];
  const xs = [...drawn.flatMap((s) => s.x), ...marks.flatMap((m) => [m.x - (m.xErr ?? 0), m.x + (m.xErr ?? 0)])];
  const ys = [
    ...drawn.flatMap((s) => s.y.flatMap((v, i) => (s.yErr?.[i] != null ? [v - s.yErr[i], v + s.yErr[i]] : [v]))),
    ...marks.flatMap((m) => [m.y - (m.yErr ?? 0), m.y + (m.yErr ?? 0)]),
  ].filter(Number.isFinite);
  if (plot.includeZeroX) xs.push(0);
  const finiteXs = xs.filter(Number.isFinite);
  if (finiteXs.length === 0 || ys.length === 0) return '';
  // A log axis spans the points and marks; an error bar reaching 0 or below does not widen it.
  const logX =
    plot.logX === true &&
    !plot.includeZeroX &&
    drawn.every((s) => s.x.every((x) => x > 0)) &&
    marks.every((m) => m.x > 0);
  const rangeXs = logX ? finiteXs.filter((x) => x > 0) : finiteXs;
  const xt = logX
    ? logAxis(Math.min(...rangeXs), Math.max(...rangeXs))
    : niceTicks(Math.min(...rangeXs), Math.max(...rangeXs));
  // A curve flat to rounding (a symmetric model's mean level, say) is drawn flat, not as magnified noise.
  const yMagnitude = Math.max(...ys.map(Math.abs));
  const ySpan = Math.max(...ys) - Math.min(...ys);
  const noise = plot.yNoise ?? 0;
  const yPad =
    ySpan > Math.max(1e-6 * yMagnitude, noise) ? ySpan * 0.04 : Math.max(1e-3 * yMagnitude, 1e6 * noise, 1e-12);
  const yt = niceTicks(Math.min(...ys) - yPad, Math.max(...ys) + yPad);
  const x0 = Math.min(xt.lo, xt.ticks[0] ?? xt.lo);
  const x1 = Math.max(xt.hi, xt.ticks[xt.ticks.length - 1] ?? xt.hi);
  const y0 = Math.min(yt.lo, yt.ticks[0] ?? yt.lo);
  const y1 = Math.max(yt.hi, yt.ticks[yt.ticks.length - 1] ?? yt.hi);
  // On a log axis positions go by log10 x; an error bar reaching below the axis is cut at its end.
  const toAxis = logX ? (x: number) => Math.log10(Math.max(x, x0)) : (x: number) => x;
  const a0 = toAxis(x0);
  const a1 = toAxis(x1);
  const px = (x: number) => M.left + ((toAxis(x) - a0) / (a1 - a0 || 1)) * (PLOT_WIDTH - M.left - M.right);
  const py = (y: number) => PLOT_HEIGHT - M.bottom - ((y - y0) / (y1 - y0 || 1)) * (PLOT_HEIGHT - M.top - M.bottom);

  const parts: string[] = [];
  parts.push(
    `<rect x="${M.left}" y="${M.top}" width="${PLOT_WIDTH - M.left - M.right}" height="${PLOT_HEIGHT - M.top - M.bottom}" class="frame"/>`,
  );
  for (const t of xt.ticks) {
    const X = num(px(t));
    parts.push(`<line x1="${X}" y1="${M.top}" x2="${X}" y2="${PLOT_HEIGHT - M.bottom}" class="grid"/>`);
    parts.push(
      `<text x="${X}" y="${PLOT_HEIGHT - M.bottom + 16}" class="tick" text-anchor="middle">${esc(tickText(t, logX ? t : xt.step))}</text>`,
    );
  }
  for (const t of yt.ticks) {
    const Y = num(py(t));
    parts.push(`<line x1="${M.left}" y1="${Y}" x2="${PLOT_WIDTH - M.right}" y2="${Y}" class="grid"/>`);
    parts.push(
      `<text x="${M.left - 6}" y="${Y}" class="tick" text-anchor="end" dominant-baseline="middle">${esc(tickText(t, yt.step))}</text>`,
    );
  }
  parts.push(
    `<text x="${num((M.left + PLOT_WIDTH - M.right) / 2)}" y="${PLOT_HEIGHT - 8}" class="axis-label" text-anchor="middle">${esc(plot.xLabel)}</text>`,
  );
  parts.push(
    `<text transform="translate(14 ${num((M.top + PLOT_HEIGHT - M.bottom) / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(plot.yLabel)}</text>`,
  );

  drawn.forEach((s) => {
    const st = styleOf(s.slot);
    const g: string[] = [];
    if (!s.pointsOnly && s.x.length > 1) {
      const d = s.x.map((x, i) => `${i === 0 ? 'M' : 'L'}${num(px(x))},${num(py(s.y[i]))}`).join('');
      g.push(`<path class="line" d="${d}" stroke="${st.colour}"${st.dash ? ` stroke-dasharray="${st.dash}"` : ''}/>`);
    }
    if (s.yErr) {
      s.x.forEach((x, i) => {
        const e = s.yErr![i];
        if (e == null || !(e > 0)) return;
        g.push(
          `<path class="errorbar" d="M${num(px(x))},${num(py(s.y[i] - e))}V${num(py(s.y[i] + e))}" stroke="${st.colour}"/>`,
        );
      });
    }
    // Markers only where they stay readable; a long line is better seen as a line.
    if (s.pointsOnly || s.x.length <= 40) {
      const d = s.x.map((x, i) => markerPath(st.marker, px(x), py(s.y[i]), 3.2)).join('');
      g.push(`<path class="markers" d="${d}" fill="${st.filled ? st.colour : 'none'}" stroke="${st.colour}"/>`);
    }
    parts.push(
      `<g class="series" data-name="${esc(s.name)}" data-points="${s.x.length}" data-total-points="${s.total}"><title>${esc(s.name)}</title>${g.join('')}</g>`,
    );
  });
  for (const m of marks) {
    const st = styleOf(m.style);
    const X = px(m.x);
    const Y = py(m.y);
    const bar = m.xErr
      ? `<path class="errorbar" d="M${num(px(m.x - m.xErr))},${num(Y)}H${num(px(m.x + m.xErr))}" stroke="${st.colour}"/>`
      : '';
    const vbar = m.yErr
      ? `<path class="errorbar" d="M${num(X)},${num(py(m.y - m.yErr))}V${num(py(m.y + m.yErr))}" stroke="${st.colour}"/>`
      : '';
    parts.push(
      `<g class="mark" data-x="${m.x}"><title>${esc(m.label)}</title>${bar}${vbar}<path d="${markerPath('diamond', X, Y, 5.5)}" fill="${m.hollow ? '#ffffff' : st.colour}" stroke="#000000" stroke-width="1.2"/></g>`,
    );
  }
  const legend =
    drawn.length > 1 || drawn.some((s) => s.name)
      ? `<ul class="legend">${drawn.map((s) => `<li>${legendSwatch(s.slot, s.pointsOnly)}${esc(s.name)}</li>`).join('')}</ul>`
      : '';
  return `<figure class="plot-figure" id="${esc(plot.id)}">
<figcaption>${esc(plot.title)}</figcaption>
<svg class="plot" data-plot="${esc(plot.id)}" data-series="${drawn.length}" data-x-scale="${logX ? 'log' : 'linear'}" viewBox="0 0 ${PLOT_WIDTH} ${PLOT_HEIGHT}" role="img" aria-label="${esc(plot.title)}">${parts.join('')}</svg>
${legend}${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}
