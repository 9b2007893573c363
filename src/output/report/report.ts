// The HTML report of a scan: one self-contained file (inline SVG and CSS, no script, nothing
// fetched) with the observables against the scanned parameter, heat maps of two-parameter scans,
// the low spectrum, the transition indicators with their peaks, the finite-size fits and the
// per-site level populations of one chosen point.
//
// Large scans stay light: a plot draws at most MAX_SERIES lines (evenly chosen, the rest named in a
// note), each thinned to at most MAX_POINTS vertices by keeping every bucket's extremes, and a
// heat map at most MAX_CELLS cells per side (averaged bins).
//
// Colours are our own: eight line colours chosen so that every pair stays at least 30 CIELAB units
// apart for normal vision and under simulated protanopia, deuteranopia and tritanopia, each line
// also carries its own dash pattern and marker shape, and heat maps use a sequential map whose
// lightness rises monotonically (readable in grey too).

import path from 'node:path';
import { OptionValueError } from '../../errors/errors.js';
import type { PointRecord } from '../../point/solvePoint.js';
import { pointTree, type ScanParams } from '../../scan/plan.js';
import { validateSpec } from '../../spec/spec.js';
import type { ScanRunSummary } from '../../scan/scanRun.js';
import { fmt } from '../../format/tables.js';
import {
  PEAK_FIT_CHI2_LIMIT,
  SIZE_AXES,
  analyseScan,
  analysisInputOf,
  availableObservables,
  observableValue,
  type AnalysisInput,
  type AnalysisOptions,
  type ScanAnalysis,
} from '../../analysis/transitions.js';
import { labUnits } from '../../spec/units.js';
import type { Indicator } from '../../analysis/indicators.js';
import { sectorKey, sectorText } from '../../analysis/crossings.js';
import type { SectorLabel } from '../../symmetry/group.js';
import type { FitResult } from '../../analysis/fits.js';

export const MAX_SERIES = 10;
export const MAX_POINTS = 400;
export const MAX_CELLS = 80;
/** Populations drawn for a chosen point: larger chains are cut to this many sites. */
export const MAX_POPULATION_SITES = 64;
/** Rows of any table (values, peaks, fits); the rest are in `summary --csv` or `--analysis --json`. */
export const MAX_TABLE_ROWS = 200;
/** Columns the table leaves out to stay narrow (they follow the ones it keeps). */
const DERIVED_NAMES = new Set(['renyi_2', 'spread']);

/** Line colours (see the header): navy, amber, wine, green, violet, lavender, brown, mauve. */
export const PALETTE = [
  '#1d367e',
  '#e99a00',
  '#94134c',
  '#00be72',
  '#7703cc',
  '#8a88f1',
  '#694300',
  '#bb8eb7',
] as const;
const DASHES = ['', '7 3', '2 3', '9 3 2 3', '4 4', '1 2', '12 4', '6 2 2 2 2 2'];
const MARKERS = ['circle', 'square', 'triangle', 'diamond', 'down', 'cross', 'plus', 'star'] as const;
/** Anchors of the sequential map, lightness L* = 11.5, 34.1, 53.2, 72.3, 93.0: indigo, blue, teal, green, cream. */
export const SEQUENTIAL_ANCHORS = ['#1b1a3f', '#2d4f8c', '#2f8c8a', '#8cc063', '#f7ecb0'] as const;

export interface ReportInput extends AnalysisInput {
  title: string;
  /** Lines under the title: where the run is, when it ran. */
  about: string[];
  analysis: ScanAnalysis;
  /** The model's energy unit in Hz when the run has laboratory units (same for every point), else null. */
  energyUnitHz: number | null;
  /** Index of the point whose populations are drawn (default: near the main indicator peak). */
  chosenPoint?: number;
}

// ---------------------------------------------------------------------------------------------
// Colour arithmetic (sRGB <-> CIELAB, D65), for the sequential map

function srgbToLinear(c: number): number {
  return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
}
function linearToSrgb(c: number): number {
  return c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
}
const WHITE = [0.95047, 1, 1.08883];

export function hexToRgb(hex: string): [number, number, number] {
  return [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255) as [number, number, number];
}

function rgbToHex(rgb: number[]): string {
  return (
    '#' +
    rgb
      .map((c) =>
        Math.round(Math.min(1, Math.max(0, c)) * 255)
          .toString(16)
          .padStart(2, '0'),
      )
      .join('')
  );
}

/** CIELAB of a linear-light RGB triple (sRGB primaries, D65 white). */
export function linearRgbToLab(rgb: number[]): [number, number, number] {
  const [r, g, b] = rgb.map((v) => Math.min(1, Math.max(0, v)));
  const X = 0.4124564 * r + 0.3575761 * g + 0.1804375 * b;
  const Y = 0.2126729 * r + 0.7151522 * g + 0.072175 * b;
  const Z = 0.0193339 * r + 0.119192 * g + 0.9503041 * b;
  const f = (t: number) => (t > 216 / 24389 ? Math.cbrt(t) : ((24389 / 27) * t + 16) / 116);
  const fx = f(X / WHITE[0]);
  const fy = f(Y / WHITE[1]);
  const fz = f(Z / WHITE[2]);
  return [116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz)];
}

export function hexToLab(hex: string): [number, number, number] {
  return linearRgbToLab(hexToRgb(hex).map(srgbToLinear));
}

function labToHex([L, a, b]: number[]): string {
  const fy = (L + 16) / 116;
  const fx = fy + a / 500;
  const fz = fy - b / 200;
  const inv = (t: number) => (t ** 3 > 216 / 24389 ? t ** 3 : (116 * t - 16) / (24389 / 27));
  const X = inv(fx) * WHITE[0];
  const Y = inv(fy) * WHITE[1];
  const Z = inv(fz) * WHITE[2];
  const r = 3.2404542 * X - 1.5371385 * Y - 0.4985314 * Z;
  const g = -0.969266 * X + 1.8760108 * Y + 0.041556 * Z;
  const bl = 0.0556434 * X - 0.2040259 * Y + 1.0572252 * Z;
  return rgbToHex([r, g, bl].map((c) => linearToSrgb(Math.min(1, Math.max(0, c)))));
}

const anchorLabs = SEQUENTIAL_ANCHORS.map(hexToLab);

/** The sequential map at t in [0, 1]: piecewise-linear in CIELAB between the anchors. */
export function sequentialColour(t: number): string {
  const u = Math.min(1, Math.max(0, Number.isFinite(t) ? t : 0)) * (anchorLabs.length - 1);
  const k = Math.min(anchorLabs.length - 2, Math.floor(u));
  const f = u - k;
  return labToHex(anchorLabs[k].map((v, i) => v + f * (anchorLabs[k + 1][i] - v)));
}

// ---------------------------------------------------------------------------------------------
// Text and numbers

function esc(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

function num(x: number): string {
  // Two decimals of a pixel are plenty and keep the file small.
  return (Math.round(x * 100) / 100).toString();
}

function tickText(x: number, step: number): string {
  if (x === 0) return '0';
  const abs = Math.abs(x);
  if (abs >= 1e5 || abs < 1e-3)
    return x.toExponential(Math.max(0, Math.min(3, -Math.floor(Math.log10(step)) + Math.floor(Math.log10(abs)))));
  const decimals = Math.max(0, Math.min(8, -Math.floor(Math.log10(step) + 1e-9)));
  return x.toFixed(decimals);
}

/** About `count` round tick values covering [lo, hi] (steps of 1, 2 or 5 times a power of ten; common practice). */
export function niceTicks(
  lo: number,
  hi: number,
  count = 5,
): { ticks: number[]; step: number; lo: number; hi: number } {
  if (!(hi > lo)) {
    const pad = lo === 0 ? 1 : Math.abs(lo) * 0.1;
    lo -= pad;
    hi += pad;
  }
  const raw = (hi - lo) / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? 10 * power;
  const first = Math.ceil(lo / step - 1e-9) * step;
  const ticks: number[] = [];
  for (let t = first; t <= hi + step * 1e-9; t += step) ticks.push(Math.abs(t) < step * 1e-9 ? 0 : t);
  return { ticks, step, lo, hi };
}

/** Keeps the first, last, smallest and largest of each bucket so peaks survive thinning. */
export function decimate(x: number[], y: number[], maxPoints = MAX_POINTS): { x: number[]; y: number[] } {
  const n = x.length;
  if (n <= maxPoints) return { x, y };
  const buckets = Math.max(1, Math.floor(maxPoints / 4));
  const size = Math.ceil(n / buckets);
  const keep = new Set<number>();
  for (let start = 0; start < n; start += size) {
    const end = Math.min(n, start + size);
    let lo = start;
    let hi = start;
    for (let k = start; k < end; k++) {
      if (y[k] < y[lo]) lo = k;
      if (y[k] > y[hi]) hi = k;
    }
    keep
      .add(start)
      .add(lo)
      .add(hi)
      .add(end - 1);
  }
  const order = [...keep].sort((a, b) => a - b);
  return { x: order.map((k) => x[k]), y: order.map((k) => y[k]) };
}

/** At most `max` items, evenly spread and always including the first and last. */
function evenlyChosen<T>(items: T[], max: number): T[] {
  if (items.length <= max) return items;
  const out: T[] = [];
  for (let k = 0; k < max; k++) out.push(items[Math.round((k * (items.length - 1)) / (max - 1))]);
  return out;
}

// ---------------------------------------------------------------------------------------------
// Units and labels

interface KeyInfo {
  symbol: string;
  name: string;
  kind: 'energy' | 'angle' | 'count' | 'lab' | 'other';
  /** Fixed unit of a laboratory quantity ([units] keys). */
  unit?: string;
}

const KEYS: Record<string, KeyInfo> = {
  'exchange.strength': { symbol: 'V', name: 'dipolar exchange', kind: 'energy' },
  'levels.tunnelling': { symbol: 'J', name: 'microwave tunnelling', kind: 'energy' },
  'levels.detuning': { symbol: 'Δ', name: 'detuning', kind: 'energy' },
  'levels.phase': { symbol: 'φ', name: 'Peierls phase', kind: 'angle' },
  'ising.strength': { symbol: 'W', name: 'diagonal dipole coupling', kind: 'energy' },
  'particles.hopping': { symbol: 't', name: 'real-space hopping', kind: 'energy' },
  'particles.onsite': { symbol: 'U', name: 'on-site energy', kind: 'energy' },
  'chain.sites': { symbol: 'L', name: 'sites', kind: 'count' },
  'levels.count': { symbol: 'N', name: 'levels', kind: 'count' },
  'particles.number': { symbol: 'n', name: 'particles', kind: 'count' },
  'units.dipole_debye': { symbol: 'd', name: 'dipole moment', kind: 'lab', unit: 'D' },
  'units.lattice_spacing_nm': { symbol: 'a', name: 'lattice spacing', kind: 'lab', unit: 'nm' },
  'units.dipole_angle_deg': { symbol: 'θ', name: 'dipole angle to the chain', kind: 'lab', unit: 'deg' },
  'units.rabi_khz': { symbol: 'Ω/2π', name: 'Rabi frequency', kind: 'lab', unit: 'kHz' },
  'units.detuning_khz': { symbol: 'Δ/h', name: 'detuning', kind: 'lab', unit: 'kHz' },
  'units.rotational_constant_ghz': { symbol: 'B/h', name: 'rotational constant', kind: 'lab', unit: 'GHz' },
  'units.energy_unit_hz': { symbol: 'ε/h', name: 'model energy unit', kind: 'lab', unit: 'Hz' },
};

function keyInfo(key: string): KeyInfo {
  const base = key.replace(/\[\d+\]/g, '');
  const known = KEYS[base];
  const index = /\[(\d+)\]/.exec(key);
  if (known) return index ? { ...known, symbol: `${known.symbol}${subscript(index[1])}` } : known;
  return { symbol: key, name: key, kind: 'other' };
}

function subscript(digits: string): string {
  return [...digits].map((d) => '₀₁₂₃₄₅₆₇₈₉'[Number(d)]).join('');
}

interface Units {
  /** Label of an energy: "model units" or "h·kHz". */
  energy: string;
  /** Factor from model energy units to the shown unit. */
  energyScale: number;
  lab: boolean;
}

function unitsOf(energyUnitHz: number | null): Units {
  if (energyUnitHz === null) return { energy: 'ε', energyScale: 1, lab: false };
  return { energy: 'h·kHz', energyScale: energyUnitHz / 1e3, lab: true };
}

interface AxisUnit {
  label: string;
  unit: string;
  scale: number;
}

function parameterAxis(key: string, units: Units): AxisUnit {
  const info = keyInfo(key);
  const text = info.kind === 'other' ? key : `${info.symbol}, ${info.name}`;
  if (info.kind === 'energy') return { label: text, unit: units.energy, scale: units.energyScale };
  if (info.kind === 'angle') return { label: text, unit: 'rad', scale: 1 };
  if (info.kind === 'lab') return { label: text, unit: info.unit ?? '', scale: 1 };
  return { label: text, unit: '', scale: 1 };
}

function axisTitle(a: AxisUnit): string {
  return a.unit ? `${a.label} [${a.unit}]` : a.label;
}

function showParams(params: ScanParams, units: Units): string {
  const parts = Object.entries(params).map(([k, v]) => {
    const info = keyInfo(k);
    const scaled = typeof v === 'number' && info.kind === 'energy' ? v * units.energyScale : v;
    const value =
      typeof scaled === 'number' ? fmt(scaled, 5) : Array.isArray(scaled) ? `[${scaled.join(', ')}]` : String(scaled);
    return `${info.kind === 'other' ? k : info.symbol} = ${value}${info.kind === 'energy' && units.lab ? ' h·kHz' : info.unit ? ` ${info.unit}` : ''}`;
  });
  return parts.length > 0 ? parts.join(', ') : 'all points';
}

interface ObservableInfo {
  title: string;
  /** For axis labels. */
  short: string;
  unit: (u: Units) => string;
  energy: boolean;
}

function observableInfo(name: string): ObservableInfo {
  const energyUnit = (u: Units) => u.energy;
  const fixed = (unit: string) => () => unit;
  const energy = /^E(\d+)$/.exec(name);
  if (energy)
    return {
      title: `E${subscript(energy[1])}, energy of state ${energy[1]}`,
      short: `E${subscript(energy[1])}`,
      unit: energyUnit,
      energy: true,
    };
  switch (name) {
    case 'E0/L':
      return { title: 'E₀/L, ground energy per site', short: 'E₀/L', unit: energyUnit, energy: true };
    case 'gap':
      return { title: 'gap E₁ − E₀', short: 'E₁ − E₀', unit: energyUnit, energy: true };
    case 'string_width':
      return { title: 'string width', short: 'string width', unit: fixed('levels²'), energy: false };
    case 'entropy':
      return {
        title: 'half-chain entanglement entropy (von Neumann)',
        short: 'S, half chain',
        unit: fixed('nats'),
        energy: false,
      };
    case 'renyi_2':
      return { title: 'half-chain Rényi-2 entropy', short: 'S₂, half chain', unit: fixed('nats'), energy: false };
    case 'level_mean':
      return { title: 'mean level ⟨n⟩, averaged over sites', short: '⟨n⟩', unit: fixed('levels'), energy: false };
    case 'spread':
      return {
        title: 'level spread ⟨n²⟩ − ⟨n⟩², averaged over sites',
        short: '⟨n²⟩ − ⟨n⟩²',
        unit: fixed('levels²'),
        energy: false,
      };
  }
  const words = name.replace(/_/g, ' ');
  return { title: words, short: words, unit: fixed(''), energy: false };
}

// ---------------------------------------------------------------------------------------------
// SVG: line plots

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
}

const W = 560;
const H = 330;
const M = { left: 70, right: 16, top: 14, bottom: 46 };

function markerPath(shape: (typeof MARKERS)[number], x: number, y: number, r: number): string {
  const p = (dx: number, dy: number) => `${num(x + dx)},${num(y + dy)}`;
  switch (shape) {
    case 'circle':
      return `M${p(-r, 0)}A${r},${r} 0 1,0 ${p(r, 0)}A${r},${r} 0 1,0 ${p(-r, 0)}Z`;
    case 'square':
      return `M${p(-r, -r)}L${p(r, -r)}L${p(r, r)}L${p(-r, r)}Z`;
    case 'triangle':
      return `M${p(0, -r * 1.2)}L${p(r * 1.1, r * 0.8)}L${p(-r * 1.1, r * 0.8)}Z`;
    case 'diamond':
      return `M${p(0, -r * 1.3)}L${p(r * 1.1, 0)}L${p(0, r * 1.3)}L${p(-r * 1.1, 0)}Z`;
    case 'down':
      return `M${p(0, r * 1.2)}L${p(r * 1.1, -r * 0.8)}L${p(-r * 1.1, -r * 0.8)}Z`;
    case 'cross':
      return `M${p(-r, -r)}L${p(r, r)}M${p(-r, r)}L${p(r, -r)}`;
    case 'plus':
      return `M${p(-r * 1.2, 0)}L${p(r * 1.2, 0)}M${p(0, -r * 1.2)}L${p(0, r * 1.2)}`;
    case 'star':
      return `M${p(-r, -r)}L${p(r, r)}M${p(-r, r)}L${p(r, -r)}M${p(-r * 1.3, 0)}L${p(r * 1.3, 0)}`;
  }
}

function styleOf(slot: number): { colour: string; dash: string; marker: (typeof MARKERS)[number]; filled: boolean } {
  const k = ((slot % PALETTE.length) + PALETTE.length) % PALETTE.length;
  const marker = MARKERS[k];
  return {
    colour: PALETTE[k],
    dash: DASHES[k],
    marker,
    filled: marker !== 'cross' && marker !== 'plus' && marker !== 'star',
  };
}

function legendSwatch(slot: number, pointsOnly = false): string {
  const s = styleOf(slot);
  const line = pointsOnly
    ? ''
    : `<line x1="2" y1="6" x2="30" y2="6" stroke="${s.colour}" stroke-width="2"${s.dash ? ` stroke-dasharray="${s.dash}"` : ''}/>`;
  return `<svg class="swatch" width="32" height="12" aria-hidden="true">${line}<path d="${markerPath(s.marker, 16, 6, 3.5)}" fill="${s.filled ? s.colour : 'none'}" stroke="${s.colour}" stroke-width="1.4"/></svg>`;
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
  const xt = niceTicks(Math.min(...finiteXs), Math.max(...finiteXs));
  // A curve flat to rounding (a symmetric model's mean level, say) is drawn flat, not as magnified noise.
  const yMagnitude = Math.max(...ys.map(Math.abs));
  const ySpan = Math.max(...ys) - Math.min(...ys);
  const yPad = ySpan > 1e-6 * yMagnitude ? ySpan * 0.04 : Math.max(1e-3 * yMagnitude, 1e-12);
  const yt = niceTicks(Math.min(...ys) - yPad, Math.max(...ys) + yPad);
  const x0 = Math.min(xt.lo, xt.ticks[0] ?? xt.lo);
  const x1 = Math.max(xt.hi, xt.ticks[xt.ticks.length - 1] ?? xt.hi);
  const y0 = Math.min(yt.lo, yt.ticks[0] ?? yt.lo);
  const y1 = Math.max(yt.hi, yt.ticks[yt.ticks.length - 1] ?? yt.hi);
  const px = (x: number) => M.left + ((x - x0) / (x1 - x0 || 1)) * (W - M.left - M.right);
  const py = (y: number) => H - M.bottom - ((y - y0) / (y1 - y0 || 1)) * (H - M.top - M.bottom);

  const parts: string[] = [];
  parts.push(
    `<rect x="${M.left}" y="${M.top}" width="${W - M.left - M.right}" height="${H - M.top - M.bottom}" class="frame"/>`,
  );
  for (const t of xt.ticks) {
    const X = num(px(t));
    parts.push(`<line x1="${X}" y1="${M.top}" x2="${X}" y2="${H - M.bottom}" class="grid"/>`);
    parts.push(
      `<text x="${X}" y="${H - M.bottom + 16}" class="tick" text-anchor="middle">${esc(tickText(t, xt.step))}</text>`,
    );
  }
  for (const t of yt.ticks) {
    const Y = num(py(t));
    parts.push(`<line x1="${M.left}" y1="${Y}" x2="${W - M.right}" y2="${Y}" class="grid"/>`);
    parts.push(
      `<text x="${M.left - 6}" y="${Y}" class="tick" text-anchor="end" dominant-baseline="middle">${esc(tickText(t, yt.step))}</text>`,
    );
  }
  parts.push(
    `<text x="${num((M.left + W - M.right) / 2)}" y="${H - 8}" class="axis-label" text-anchor="middle">${esc(plot.xLabel)}</text>`,
  );
  parts.push(
    `<text transform="translate(14 ${num((M.top + H - M.bottom) / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(plot.yLabel)}</text>`,
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
<svg class="plot" data-plot="${esc(plot.id)}" data-series="${drawn.length}" viewBox="0 0 ${W} ${H}" role="img" aria-label="${esc(plot.title)}">${parts.join('')}</svg>
${legend}${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}

// ---------------------------------------------------------------------------------------------
// SVG: heat maps

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
  const plotW = W - left - right;
  const plotH = H - top - bottom;
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
        `<text x="${num(left + (c + 0.5) * cw)}" y="${H - bottom + 16}" class="tick" text-anchor="middle">${esc(fmt(v, 4))}</text>`,
      );
  });
  yValues.forEach((v, r) => {
    if (r % yEvery === 0)
      ticks.push(
        `<text x="${left - 6}" y="${num(top + plotH - (r + 0.5) * ch)}" class="tick" text-anchor="end" dominant-baseline="middle">${esc(fmt(v, 4))}</text>`,
      );
  });
  // Colour bar with its own ticks.
  const barX = W - right + 14;
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
<svg class="heatmap" data-plot="${esc(map.id)}" data-rows="${yValues.length}" data-cols="${xValues.length}" viewBox="0 0 ${W} ${H}" role="img" aria-label="${esc(map.title)}">
<defs><linearGradient id="${gradientId}" x1="0" y1="1" x2="0" y2="0">${stops}</linearGradient></defs>
${cells.join('')}${ticks.join('')}
<rect x="${barX}" y="${top}" width="${barW}" height="${plotH}" fill="url(#${gradientId})" class="colour-bar"/>${barTicks}
<text x="${num((left + left + plotW) / 2)}" y="${H - 8}" class="axis-label" text-anchor="middle">${esc(map.xLabel)}</text>
<text transform="translate(14 ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.yLabel)}</text>
<text transform="translate(${W - 6} ${num(top + plotH / 2)}) rotate(-90)" class="axis-label" text-anchor="middle">${esc(map.zLabel)}</text>
</svg>
${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('')}
</figure>`;
}

// ---------------------------------------------------------------------------------------------
// The report

interface Line {
  fixed: ScanParams;
  points: { x: number; record: PointRecord; index: number }[];
}

/** Points grouped into lines along the parameter, in parameter order. */
function linesAlong(input: ReportInput, parameter: string): Line[] {
  const others = input.zip ? [] : input.axes.map((a) => a.key).filter((k) => k !== parameter);
  const groups = new Map<string, Line>();
  for (const p of input.points) {
    if (!p.record) continue;
    const key = JSON.stringify(others.map((k) => p.params[k] ?? null));
    let line = groups.get(key);
    if (!line) {
      const fixed: ScanParams = {};
      for (const k of others) fixed[k] = p.params[k];
      groups.set(key, (line = { fixed, points: [] }));
    }
    line.points.push({ x: p.params[parameter] as number, record: p.record, index: p.index });
  }
  for (const line of groups.values()) line.points.sort((a, b) => a.x - b.x);
  return [...groups.values()];
}

function section(id: string, title: string, body: string[], intro?: string): string {
  const content = body.filter((b) => b !== '');
  if (content.length === 0) return '';
  return `<section id="${id}"><h2>${esc(title)}</h2>${intro ? `<p class="intro">${esc(intro)}</p>` : ''}<div class="figures">${content.join('\n')}</div></section>`;
}

/** A note under a table cut to MAX_TABLE_ROWS rows. */
function cutNote(shown: number, total: number): string {
  return total > shown
    ? `<p class="note">first ${shown} of ${total} rows; \`rungchain summary RUN --analysis --json\` has them all</p>`
    : '';
}

function fitTable(
  allRows: { label: string; fit: FitResult; warnings?: string }[],
  variable: string,
  valueUnit: string,
): string {
  const rows = allRows.slice(0, MAX_TABLE_ROWS);
  const warned = rows.some((r) => r.warnings !== undefined);
  const head = `<tr><th>what</th><th>sizes ${esc(variable)}</th><th>extrapolated ${esc(variable)} → ∞${valueUnit ? ` [${esc(valueUnit)}]` : ''}</th><th>coefficients a₁…</th><th>residuals</th><th>χ²/dof</th>${warned ? '<th>warnings</th>' : ''}</tr>`;
  const body = rows
    .map(
      ({ label, fit, warnings }) =>
        `<tr><td>${esc(label)}</td><td>${fit.sizes.join(', ')}</td><td>${esc(fmt(fit.extrapolated, 7))} ± ${fit.extrapolated_error === null ? '?' : esc(fmt(fit.extrapolated_error, 2))}</td><td>${fit.coefficients
          .slice(1)
          .map((c, k) => `${esc(fmt(c, 5))}${fit.errors[k + 1] !== null ? ` ± ${esc(fmt(fit.errors[k + 1], 2))}` : ''}`)
          .join(
            '; ',
          )}</td><td>${fit.residuals.map((r) => esc(fmt(r, 2))).join(', ')}</td><td>${fit.dof > 0 ? esc(fmt(fit.chi2 / fit.dof, 3)) : '-'}</td>${warned ? `<td class="warn">${esc(warnings || '-')}</td>` : ''}</tr>`,
    )
    .join('');
  return `<table class="fits">${head}${body}</table>${cutNote(rows.length, allRows.length)}`;
}

const INDICATOR_SHORT: Record<string, string> = {
  gap: 'E₁ − E₀',
  fidelity: 'χ_F per site',
  curvature: '−∂²E₀/∂x² per site',
  width_slope: '∂(string width)/∂x',
};

const INDICATOR_UNITS: Record<string, (x: AxisUnit, u: Units) => string> = {
  gap: (_x, u) => u.energy,
  fidelity: (x) => (x.unit ? `1/(${x.unit})²` : ''),
  curvature: (x, u) => (x.unit ? `${u.energy}/(${x.unit})²` : u.energy),
  width_slope: (x) => (x.unit ? `levels²/(${x.unit})` : 'levels²'),
};

/** Which point's populations to draw: the requested one, else the done point nearest the main peak of the largest system. */
function choosePoint(input: ReportInput): { index: number; why: string } | null {
  const done = input.points.filter((p) => p.record !== null);
  if (done.length === 0) return null;
  if (input.chosenPoint !== undefined)
    return done.some((p) => p.index === input.chosenPoint) ? { index: input.chosenPoint, why: 'as requested' } : null;
  const { analysis } = input;
  const param = analysis.parameter;
  if (param !== null) {
    // The line of the largest system, and its first indicator peak in order of preference.
    let best: { line: (typeof analysis.lines)[number]; size: number } | null = null;
    for (const line of analysis.lines) {
      const size = (line.sites ?? 0) * 1000 + (line.levels ?? 0);
      if (!best || size > best.size) best = { line, size };
    }
    const peak =
      best &&
      ['fidelity', 'gap', 'curvature', 'width_slope']
        .map((n) => best.line.indicators.find((i) => i.name === n)?.peak)
        .find((p) => p && !p.at_edge);
    if (best && peak) {
      const onLine = done.filter((p) =>
        Object.entries(best.line.fixed).every(([k, v]) => JSON.stringify(p.params[k]) === JSON.stringify(v)),
      );
      if (onLine.length > 0) {
        onLine.sort(
          (a, b) =>
            Math.abs((a.params[param] as number) - peak.position) -
            Math.abs((b.params[param] as number) - peak.position),
        );
        return { index: onLine[0].index, why: 'near the main transition indicator of the largest system' };
      }
    }
  }
  return { index: done[Math.floor(done.length / 2)].index, why: 'in the middle of the scan' };
}

export function renderReport(input: ReportInput): string {
  const units = unitsOf(input.energyUnitHz);
  const { analysis } = input;
  const parameter = analysis.parameter;
  const done = input.points.filter((p) => p.record !== null);
  const records = done.map((p) => p.record!);
  const failed = input.points.length - done.length;
  const sections: string[] = [];
  const xAxis = parameter ? parameterAxis(parameter, units) : null;
  const lines = parameter ? linesAlong(input, parameter) : [];
  const lineName = (fixed: ScanParams) => showParams(fixed, units);
  const scaleX = (x: number) => x * (xAxis?.scale ?? 1);

  // Observables against the parameter.
  const names = availableObservables(records).filter((n) => n !== 'E0');
  if (parameter && xAxis) {
    const plots = names.map((name) => {
      const info = observableInfo(name);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      return renderLinePlot({
        id: `obs-${name.replace(/[^A-Za-z0-9]+/g, '-')}`,
        title: `${info.title} against ${xAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel: unit ? `${info.short} [${unit}]` : info.short,
        series: lines.map((line) => ({
          name: lineName(line.fixed),
          x: line.points.map((p) => scaleX(p.x)),
          y: line.points.map((p) => (observableValue(p.record, name) ?? NaN) * scale),
        })),
      });
    });
    sections.push(
      section(
        'observables',
        'Observables',
        plots,
        `One line per value of the other scanned ${input.axes.length > 2 ? 'axes' : 'axis'}.`,
      ),
    );
  }

  // Heat maps of two-parameter scans.
  const numericAxes = input.axes.filter((a) => a.values.every((v) => typeof v === 'number'));
  if (parameter && xAxis && !input.zip && numericAxes.length >= 2) {
    const other = [...numericAxes].reverse().find((a) => a.key !== parameter)!;
    const rest = input.axes.filter((a) => a.key !== parameter && a.key !== other.key);
    const fixed: ScanParams = {};
    for (const a of rest) fixed[a.key] = a.values[0];
    const xValues = [...new Set(input.axes.find((a) => a.key === parameter)!.values as number[])].sort((a, b) => a - b);
    const yValues = [...new Set(other.values as number[])].sort((a, b) => a - b);
    const yAxis = parameterAxis(other.key, units);
    const cell = new Map<string, PointRecord>();
    for (const p of done) {
      if (rest.some((a) => JSON.stringify(p.params[a.key]) !== JSON.stringify(fixed[a.key]))) continue;
      cell.set(`${String(p.params[parameter])}|${String(p.params[other.key])}`, p.record!);
    }
    const heatNames = ['string_width', 'gap', 'entropy', 'E0/L'].filter((n) => names.includes(n));
    const maps = heatNames.map((name) => {
      const info = observableInfo(name);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      return renderHeatMap({
        id: `heat-${name.replace(/[^A-Za-z0-9]+/g, '-')}`,
        title: `${info.title} over ${xAxis.label} and ${yAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel: axisTitle(yAxis),
        xValues: xValues.map(scaleX),
        yValues: yValues.map((v) => v * yAxis.scale),
        z: yValues.map((yv) =>
          xValues.map((xv) => {
            const r = cell.get(`${xv}|${yv}`);
            return r ? (observableValue(r, name) ?? NaN) * scale : NaN;
          }),
        ),
        zLabel: unit ? `${info.short} [${unit}]` : info.short,
        notes: rest.length > 0 ? [`other axes held at ${showParams(fixed, units)}`] : [],
      });
    });
    sections.push(section('heatmaps', 'Two-parameter maps', maps));
  }

  // Low spectrum flowing with the parameter.
  if (parameter && xAxis) {
    const chosen = evenlyChosen(lines, 4);
    const plots = chosen.map((line, k) => {
      const states = Math.max(...line.points.map((p) => p.record.energies.length));
      return renderLinePlot({
        id: `spectrum-${k}`,
        title: `low spectrum E_k − E₀ against ${xAxis.label}${lines.length > 1 ? ` (${lineName(line.fixed)})` : ''}`,
        xLabel: axisTitle(xAxis),
        yLabel: `E_k − E₀ [${units.energy}]`,
        series: Array.from({ length: states }, (_, s) => ({
          name: `k = ${s}`,
          x: line.points.map((p) => scaleX(p.x)),
          y: line.points.map((p) => ((p.record.energies[s] ?? NaN) - p.record.energies[0]) * units.energyScale),
        })),
        notes: lines.length > chosen.length && k === 0 ? [`${chosen.length} of ${lines.length} lines shown`] : [],
      });
    });
    sections.push(
      section(
        'spectrum',
        'Low spectrum',
        plots,
        'Excitation energies of the lowest states; level crossings and a closing gap show where the ground state changes character.',
      ),
    );
  }

  // Lowest level of each symmetry sector: a crossing of the ground state shows as two sectors' lines meeting.
  if (parameter && xAxis) {
    const chosen = evenlyChosen(
      lines.filter((l) => l.points.some((p) => p.record.solver.sector_runs)),
      4,
    );
    const plots = chosen.map((line, k) => {
      const levels = new Map<string, { label: SectorLabel; y: number[]; above: number }>();
      line.points.forEach((p, i) => {
        for (const run of p.record.solver.sector_runs ?? []) {
          const key = sectorKey(run.label);
          let level = levels.get(key);
          if (!level)
            levels.set(
              key,
              (level = { label: run.label, y: new Array<number>(line.points.length).fill(NaN), above: Infinity }),
            );
          level.y[i] = run.lowest;
          level.above = Math.min(level.above, run.lowest - p.record.energies[0]);
        }
      });
      // The sectors that come nearest the ground level (the ground sectors first), as many as a plot shows.
      const shown = [...levels.values()].sort((a, b) => a.above - b.above).slice(0, MAX_SERIES);
      const analysed = analysis.lines.find((l) => JSON.stringify(l.fixed) === JSON.stringify(line.fixed));
      const e0At = (x: number) => {
        const i = line.points.findIndex((p) => p.x >= x);
        if (i <= 0) return line.points[Math.max(i, 0)].record.energies[0];
        const a = line.points[i - 1];
        const b = line.points[i];
        const from = analysed?.crossings.find((c) => c.position === x)?.from;
        const level = from ? levels.get(sectorKey(from)) : undefined;
        // The crossing lies on the line of the sector it leaves.
        const ya = level ? level.y[i - 1] : a.record.energies[0];
        const yb = level ? level.y[i] : b.record.energies[0];
        return ya + ((x - a.x) / (b.x - a.x)) * (yb - ya);
      };
      return renderLinePlot({
        id: `sectors-${k}`,
        title: `lowest level of each sector against ${xAxis.label}${lines.length > 1 ? ` (${lineName(line.fixed)})` : ''}`,
        xLabel: axisTitle(xAxis),
        yLabel: `E [${units.energy}]`,
        series: shown.map((level) => ({
          name: sectorText(level.label),
          x: line.points.map((p) => scaleX(p.x)),
          y: level.y.map((v) => v * units.energyScale),
        })),
        marks: (analysed?.crossings ?? []).map((c) => ({
          x: scaleX(c.position),
          y: e0At(c.position) * units.energyScale,
          xErr: 0,
          label: `crossing at ${fmt(scaleX(c.position), 7)}: ${sectorText(c.from)} → ${sectorText(c.to)}${c.interpolated ? '' : ' (midpoint: no sector energies)'}`,
          style: 0,
          hollow: false,
        })),
        notes:
          levels.size > shown.length
            ? [`the ${shown.length} of ${levels.size} sectors that come nearest the ground level`]
            : [],
      });
    });
    sections.push(
      section(
        'sectors',
        'Sector levels',
        plots,
        'The lowest energy of each symmetry sector (q: level charge, m: momentum 2πm/L, P: reflection, F: level flip); where the ground state changes sector the lines cross, and diamonds mark the crossings, placed where the two lines meet between grid points.',
      ),
    );
  }

  // Transition indicators.
  if (parameter && xAxis && analysis.lines.length > 0) {
    const kinds: Indicator['name'][] = ['gap', 'fidelity', 'curvature', 'width_slope'];
    const plots = kinds.map((name) => {
      const withIt = analysis.lines.filter((l) => l.indicators.some((i) => i.name === name));
      if (withIt.length === 0) return '';
      const first = withIt[0].indicators.find((i) => i.name === name)!;
      const unit = INDICATOR_UNITS[name](xAxis, units);
      const yScale =
        name === 'gap'
          ? units.energyScale
          : name === 'fidelity'
            ? 1 / xAxis.scale ** 2
            : name === 'curvature'
              ? units.energyScale / xAxis.scale ** 2
              : 1 / xAxis.scale;
      const shownLines = evenlyChosen(withIt, MAX_SERIES);
      const series = shownLines.map((l, k) => {
        const ind = l.indicators.find((i) => i.name === name)!;
        return { name: lineName(l.fixed), x: ind.x.map(scaleX), y: ind.y.map((v) => v * yScale), style: k };
      });
      const marks = shownLines.flatMap((l, k) => {
        const ind = l.indicators.find((i) => i.name === name)!;
        const peak = ind.peak;
        if (ind.kind === 'crossing' && ind.crossing) {
          const c = ind.crossing;
          // On the curve's sample nearest the crossing (a curve across a crossing has no value at it).
          const nearest = ind.x.reduce(
            (best, v, i) => (Math.abs(v - c.position) < Math.abs(ind.x[best] - c.position) ? i : best),
            0,
          );
          return [
            {
              x: scaleX(c.position),
              y: (ind.y[nearest] ?? 0) * yScale,
              xErr: 0,
              label: `${lineName(l.fixed)}: level crossing at ${fmt(scaleX(c.position), 7)} (${sectorText(c.from)} → ${sectorText(c.to)}), not a smooth ${first.extremum === 'min' ? 'minimum' : 'peak'}`,
              style: k,
              hollow: false,
            },
          ];
        }
        if (!peak) return [];
        return [
          {
            x: scaleX(peak.position),
            y: peak.value * yScale,
            xErr: peak.uncertainty * xAxis.scale,
            label: `${lineName(l.fixed)}: ${first.extremum === 'min' ? 'minimum' : 'peak'} at ${fmt(scaleX(peak.position), 5)} ± ${fmt(peak.uncertainty * xAxis.scale, 2)}${peak.at_edge ? ' (at the end of the scan)' : peak.refined ? '' : ' (the grid point: no parabola fits there)'}`,
            style: k,
            hollow: peak.at_edge,
          },
        ];
      });
      return renderLinePlot({
        id: `indicator-${name}`,
        title: `${first.label} against ${xAxis.label}`,
        xLabel: axisTitle(xAxis),
        yLabel:
          (name === 'gap' && first.uses === 'gap_above_ground' ? 'E(next level) − E₀' : INDICATOR_SHORT[name]) +
          (unit ? ` [${unit}]` : ''),
        series,
        marks,
        notes: marks.some((m) => m.hollow)
          ? ['hollow diamonds: the extremum is at the end of the scan, the peak may lie beyond it']
          : [],
      });
    });
    const table = `<table class="peaks"><tr><th>line</th>${kinds.map((k) => `<th>${esc(k === 'gap' ? 'gap minimum' : k === 'fidelity' ? 'fidelity peak' : k === 'curvature' ? '−d²E₀/dx² peak' : 'steepest string width')}</th>`).join('')}</tr>${analysis.lines
      .slice(0, MAX_TABLE_ROWS)
      .map(
        (l) =>
          `<tr><td>${esc(lineName(l.fixed))}</td>${kinds
            .map((k) => {
              const ind = l.indicators.find((i) => i.name === k);
              const p = ind?.peak;
              if (ind?.kind === 'crossing' && ind.crossing)
                return `<td>crossing at ${esc(fmt(scaleX(ind.crossing.position), 7))} (${esc(sectorText(ind.crossing.from))} → ${esc(sectorText(ind.crossing.to))})</td>`;
              return `<td>${p ? `${esc(fmt(scaleX(p.position), 5))} ± ${esc(fmt(p.uncertainty * xAxis.scale, 2))}${p.at_edge ? ' (edge)' : p.refined ? '' : ' (grid)'}` : '-'}</td>`;
            })
            .join('')}</tr>`,
      )
      .join('')}</table>${cutNote(Math.min(MAX_TABLE_ROWS, analysis.lines.length), analysis.lines.length)}`;
    sections.push(
      section(
        'indicators',
        'Transition indicators',
        [...plots, `<div class="table-wrap">${table}</div>`],
        `Diamonds mark each line's extremum (parabola through the extremal grid point and its neighbours), with a bar of ± half the grid spacing. Fidelity susceptibility per site χ_F = −2 ln F/(δ² L) from overlaps F of neighbouring ground states, except across a level crossing, where the extremum is the crossing itself (marked and named in the table). The gap is the distance from the (possibly degenerate) ground level to the next level.`,
      ),
    );
  }

  // Finite-size fits.
  const fitParts: string[] = [];
  const power = analysis.power;
  const powerText = power === 1 ? '' : `^${fmt(power, 3)}`;
  if (analysis.peak_fits.length > 0 && xAxis) {
    const bySize = new Map<string, typeof analysis.peak_fits>();
    for (const f of analysis.peak_fits) bySize.set(f.size, [...(bySize.get(f.size) ?? []), f]);
    for (const [size, fits] of bySize) {
      const v = SIZE_AXES[size];
      const shown = fits.slice(0, MAX_SERIES);
      fitParts.push(
        renderLinePlot({
          id: `fit-peaks-${v}`,
          title: `peak positions against 1/${v}${powerText}, with the fits`,
          xLabel: `1/${v}${powerText}`,
          yLabel: axisTitle(xAxis),
          includeZeroX: true,
          series: shown.flatMap((f, k) => {
            const xs = f.fit.sizes.map((s) => 1 / s ** power);
            const fitX = Array.from({ length: 21 }, (_, i) => (Math.max(...xs) * i) / 20);
            const label = `${f.label}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`;
            return [
              {
                name: label,
                x: xs,
                y: f.fit.values.map(scaleX),
                yErr: (f.fit.sigmas ?? []).map((s) => s * xAxis.scale),
                pointsOnly: true,
                style: k,
              },
              {
                name: `${label}: fit`,
                x: fitX,
                y: fitX.map((x) => scaleX(f.fit.coefficients.reduce((sum, a, i) => sum + a * x ** i, 0))),
                style: k,
              },
            ];
          }),
          marks: shown.map((f, k) => ({
            x: 0,
            y: scaleX(f.fit.extrapolated),
            yErr: f.fit.extrapolated_error !== null ? f.fit.extrapolated_error * xAxis.scale : undefined,
            label: `${f.label}: extrapolated ${fmt(scaleX(f.fit.extrapolated), 6)} ± ${f.fit.extrapolated_error === null ? '?' : fmt(f.fit.extrapolated_error * xAxis.scale, 2)}`,
            style: k,
          })),
          notes:
            fits.length > shown.length ? [`${shown.length} of ${fits.length} fits drawn; all are in the table`] : [],
        }),
      );
      fitParts.push(
        `<div class="table-wrap">${fitTable(
          fits.map((f) => ({
            label: `${f.label}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`,
            fit: f.fit,
            warnings: f.flags
              .map((w) =>
                w === 'outside_scan' ? 'extrapolated outside the scanned range' : `χ²/dof above ${PEAK_FIT_CHI2_LIMIT}`,
              )
              .join(', '),
          })),
          v,
          xAxis.unit,
        )}</div>`,
      );
    }
  }
  if (analysis.observable_fits.length > 0) {
    const groups = new Map<string, typeof analysis.observable_fits>();
    for (const f of analysis.observable_fits)
      groups.set(`${f.observable}|${f.size}`, [...(groups.get(`${f.observable}|${f.size}`) ?? []), f]);
    for (const fits of groups.values()) {
      const { observable, size } = fits[0];
      const v = SIZE_AXES[size];
      const info = observableInfo(observable);
      const scale = info.energy ? units.energyScale : 1;
      const unit = info.unit(units);
      const yLabel = unit ? `${info.short} [${unit}]` : info.short;
      // With the parameter among the fixed axes: the extrapolated value against it, as a line per other axis.
      if (parameter && xAxis && fits.every((f) => typeof f.fixed[parameter] === 'number')) {
        const others = new Map<string, typeof fits>();
        for (const f of fits) {
          const rest = { ...f.fixed };
          delete rest[parameter];
          const key = JSON.stringify(rest);
          others.set(key, [...(others.get(key) ?? []), f]);
        }
        fitParts.push(
          renderLinePlot({
            id: `fit-${observable.replace(/[^A-Za-z0-9]+/g, '-')}-${v}`,
            title: `${info.title} extrapolated to ${v} → ∞ (fit against 1/${v}${powerText}), against ${xAxis.label}`,
            xLabel: axisTitle(xAxis),
            yLabel,
            series: [...others.values()].map((group, k) => {
              const sorted = [...group].sort((a, b) => (a.fixed[parameter] as number) - (b.fixed[parameter] as number));
              const rest = { ...sorted[0].fixed };
              delete rest[parameter];
              return {
                name: Object.keys(rest).length ? lineName(rest) : `extrapolated ${v} → ∞`,
                x: sorted.map((f) => scaleX(f.fixed[parameter] as number)),
                y: sorted.map((f) => f.fit.extrapolated * scale),
                yErr: sorted.map((f) => (f.fit.extrapolated_error === null ? null : f.fit.extrapolated_error * scale)),
                style: k,
              };
            }),
          }),
        );
      } else {
        fitParts.push(
          renderLinePlot({
            id: `fit-${observable.replace(/[^A-Za-z0-9]+/g, '-')}-${v}`,
            title: `${info.title} against 1/${v}${powerText}, with the fits`,
            xLabel: `1/${v}${powerText}`,
            yLabel,
            includeZeroX: true,
            series: fits.slice(0, MAX_SERIES).flatMap((f, k) => {
              const xs = f.fit.sizes.map((s) => 1 / s ** power);
              const fitX = Array.from({ length: 21 }, (_, i) => (Math.max(...xs) * i) / 20);
              const name = Object.keys(f.fixed).length ? lineName(f.fixed) : observable;
              return [
                { name, x: xs, y: f.fit.values.map((y) => y * scale), pointsOnly: true, style: k },
                {
                  name: `${name}: fit`,
                  x: fitX,
                  y: fitX.map((x) => f.fit.coefficients.reduce((sum, a, i) => sum + a * x ** i, 0) * scale),
                  style: k,
                },
              ];
            }),
          }),
        );
      }
      fitParts.push(
        `<div class="table-wrap">${fitTable(
          fits.map((f) => ({
            label: `${observable}${Object.keys(f.fixed).length ? ` (${lineName(f.fixed)})` : ''}`,
            fit: f.fit,
          })),
          v,
          unit,
        )}</div>`,
      );
    }
  }
  if (fitParts.length > 0) {
    sections.push(
      section(
        'fits',
        'Finite-size trends',
        fitParts,
        `Weighted least squares y = a₀ + a₁ x${analysis.terms > 2 ? ' + a₂ x² …' : ''} with x = 1/size${powerText}; a₀ is the value extrapolated to infinite size. Peak positions are weighted by their grid uncertainty; observables equally, with errors from the residual scatter.`,
      ),
    );
  }

  // Without a numeric parameter (e.g. only particle kinds scanned) there is nothing to draw against: a table.
  if (!parameter && done.length > 0) {
    const shown = done.slice(0, MAX_TABLE_ROWS);
    const columns = names.filter((n) => !DERIVED_NAMES.has(n));
    const head = `<tr><th>point</th>${input.axes.map((a) => `<th>${esc(a.key)}</th>`).join('')}${columns
      .map((n) => {
        const info = observableInfo(n);
        const unit = info.unit(units);
        return `<th>${esc(info.short)}${unit ? ` [${esc(unit)}]` : ''}</th>`;
      })
      .join('')}</tr>`;
    const rows = shown
      .map((p) => {
        const cells = columns.map((n) => {
          const v = observableValue(p.record!, n);
          return `<td>${v === undefined ? '-' : esc(fmt(v * (observableInfo(n).energy ? units.energyScale : 1), 7))}</td>`;
        });
        return `<tr><td>${p.index}</td>${input.axes.map((a) => `<td>${esc(String(p.params[a.key]))}</td>`).join('')}${cells.join('')}</tr>`;
      })
      .join('');
    const more =
      done.length > shown.length
        ? `<p class="note">first ${shown.length} of ${done.length} points; \`rungchain summary RUN --csv\` has them all</p>`
        : '';
    sections.push(
      section('values', 'Values per point', [
        `<div class="table-wrap"><table class="values">${head}${rows}</table>${more}</div>`,
      ]),
    );
  }

  // Populations of one point.
  const choice = choosePoint(input);
  if (choice !== null) {
    const chosen = choice.index;
    const point = input.points.find((p) => p.index === chosen)!;
    const pops = point.record!.observables.populations;
    const sites = Math.min(pops.length, MAX_POPULATION_SITES);
    const levels = pops[0]?.length ?? 0;
    const map = renderHeatMap({
      id: 'populations',
      title: `level populations per site at point ${chosen} (${showParams(point.params, units)})`,
      xLabel: 'level n',
      yLabel: 'site i',
      xValues: Array.from({ length: levels }, (_, n) => n),
      yValues: Array.from({ length: sites }, (_, i) => i),
      z: pops.slice(0, sites),
      zLabel: point.record!.basis.kind === 'pinned' ? 'probability' : 'mean occupation',
      // Probabilities on a fixed scale; occupations from zero.
      range: point.record!.basis.kind === 'pinned' ? [0, 1] : [0, Math.max(1e-12, ...pops.flat())],
      annotate: sites * levels <= 96,
      notes: pops.length > sites ? [`first ${sites} of ${pops.length} sites`] : [],
    });
    sections.push(
      section(
        'populations',
        'Level populations of one point',
        [map],
        `Chosen ${choice.why}; \`rungchain report RUN --point INDEX\` picks another.`,
      ),
    );
  }

  const axesText = input.axes
    .map(
      (a) =>
        `${keyInfo(a.key).kind === 'other' ? a.key : `${keyInfo(a.key).symbol} (${a.key})`}: ${a.values.length} value${a.values.length === 1 ? '' : 's'}`,
    )
    .join(input.zip ? ' with ' : ' × ');
  const unitText = units.lab
    ? `Energies in h·kHz (the model's energy unit is h × ${fmt(input.energyUnitHz, 6)} Hz, from the run's [units]).`
    : "Energies in ε, the model's energy unit: the unit of the spec's couplings (usually the tunnelling J).";
  const notes = [...analysis.notes];
  if (failed > 0)
    notes.push(`${failed} of ${input.points.length} points have no result (failed or not yet run); they are left out.`);
  const toc = sections
    .map((s) => /<section id="([^"]+)"><h2>([^<]+)<\/h2>/.exec(s))
    .filter((m): m is RegExpExecArray => m !== null)
    .map((m) => `<a href="#${m[1]}">${m[2]}</a>`)
    .join(' · ');
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(input.title)}</title>
<style>${STYLE}</style>
</head>
<body>
<header>
<h1>${esc(input.title)}</h1>
${input.about.map((a) => `<p class="about">${esc(a)}</p>`).join('\n')}
<p class="about">Scan: ${esc(axesText)}; ${done.length} of ${input.points.length} points solved. ${esc(unitText)}</p>
${notes.map((n) => `<p class="note">${esc(n)}</p>`).join('\n')}
<nav>${toc}</nav>
</header>
<main>
${sections.join('\n')}
</main>
<footer><p>Written by rungchain. Self-contained: no scripts, nothing fetched.</p></footer>
</body>
</html>
`;
}

const STYLE = `
:root { color-scheme: light; }
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 0 auto; max-width: 1240px; padding: 16px 24px 40px; color: #1a1a1a; background: #ffffff; }
h1 { font-size: 1.45rem; margin: 0.2em 0; }
h2 { font-size: 1.15rem; margin: 1.6em 0 0.4em; border-bottom: 1px solid #d0d0d0; padding-bottom: 4px; }
p.about, p.intro { margin: 0.25em 0; color: #333333; max-width: 70em; }
p.note { margin: 0.2em 0; font-size: 0.85rem; color: #555555; }
nav { margin: 0.8em 0; font-size: 0.95rem; }
nav a { color: #1d367e; }
.figures { display: flex; flex-wrap: wrap; gap: 18px; }
figure.plot-figure { margin: 0; flex: 1 1 520px; max-width: 600px; }
figcaption { font-weight: 600; font-size: 0.92rem; margin-bottom: 4px; }
svg.plot, svg.heatmap { width: 100%; height: auto; display: block; }
svg .frame { fill: none; stroke: #444444; stroke-width: 1; }
svg .colour-bar { stroke: #444444; stroke-width: 1; }
svg .grid { stroke: #e3e3e3; stroke-width: 1; }
svg .axis { stroke: #444444; stroke-width: 1; }
svg .tick { font-size: 11px; fill: #333333; }
svg .axis-label { font-size: 12.5px; fill: #1a1a1a; }
svg .cell-text { font-size: 10px; }
svg .line { fill: none; stroke-width: 2; stroke-linejoin: round; }
svg .markers { stroke-width: 1.3; }
svg .errorbar { fill: none; stroke-width: 1.4; }
ul.legend { list-style: none; padding: 0; margin: 4px 0 0; display: flex; flex-wrap: wrap; gap: 2px 14px; font-size: 0.82rem; }
ul.legend li { display: flex; align-items: center; gap: 4px; }
.table-wrap { flex: 1 1 100%; overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.85rem; margin: 6px 0; }
th, td { border: 1px solid #d0d0d0; padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #f3f3f3; }
footer { margin-top: 2em; font-size: 0.8rem; color: #666666; }
@media print { figure.plot-figure { break-inside: avoid; } }
`;

// ---------------------------------------------------------------------------------------------
// From a run folder

export interface RunReportOptions extends AnalysisOptions {
  point?: number;
}

/**
 * The model's energy unit in Hz when every solved point of the run has the same laboratory units,
 * else null (model units); a run without [units] gives null.
 */
function runEnergyUnitHz(summary: ScanRunSummary): { hz: number | null; note: string | null } {
  const raw = summary.manifest.spec;
  if (typeof raw !== 'object' || raw === null || !('units' in raw)) return { hz: null, note: null };
  let hz: number | null = null;
  for (const row of summary.rows) {
    if (row.record?.status !== 'done') continue;
    let value: number | undefined;
    try {
      value = labUnits(validateSpec(pointTree(raw, row.params)))?.energyUnitHz;
    } catch {
      value = undefined;
    }
    if (value === undefined)
      return { hz: null, note: 'laboratory units could not be read back from the run; energies are in model units' };
    if (hz !== null && Math.abs(value - hz) > 1e-9 * Math.abs(hz)) {
      return {
        hz: null,
        note: 'the energy unit in Hz changes across the scan (it follows a scanned coupling); energies are in model units',
      };
    }
    hz = value;
  }
  return { hz, note: null };
}

/** Everything the report of a scan run folder needs, with the analysis done. */
export function reportInputFromRun(summary: ScanRunSummary, options: RunReportOptions = {}): ReportInput {
  const input = analysisInputOf(summary);
  const analysis = analyseScan(input, options);
  const { hz, note } = runEnergyUnitHz(summary);
  if (note) analysis.notes.push(note);
  if (options.point !== undefined && !input.points.some((p) => p.index === options.point && p.record !== null)) {
    throw new OptionValueError(
      'point',
      String(options.point),
      `no solved point with that index in ${summary.dir} (points 0 to ${input.points.length - 1})`,
    );
  }
  const specName = typeof summary.manifest.spec_path === 'string' ? path.basename(summary.manifest.spec_path) : 'scan';
  return {
    ...input,
    title: `rungchain report: ${specName}`,
    about: [`Run folder ${summary.dir}, started ${summary.manifest.created} (rungchain ${summary.manifest.version}).`],
    analysis,
    energyUnitHz: hz,
    chosenPoint: options.point,
  };
}
