import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Browser } from 'playwright-core';
import { renderReport, type ReportInput } from '../../../src/output/report/report.js';
import { MAX_SERIES } from '../../../src/output/report/linePlot.js';
import { MAX_CELLS } from '../../../src/output/report/heatMap.js';
import { MAX_POINTS, decimate } from '../../../src/output/report/thinning.js';
import { analyseScan, type AnalysisPoint } from '../../../src/analysis/transitions.js';
import type { PointRecord } from '../../../src/point/solvePoint.js';
import { ROOT, runCli } from '../../support/cli.js';
import { writeDemoReport } from '../../../src/demo/report.js';
import { launchBrowser } from '../../support/browser.js';

const ARTIFACTS = path.join(ROOT, 'tests/artifacts');

// The transverse-field Ising ring through docs/model.md (see tests/support/ising.ts): two chain lengths,
// eleven fields across the transition at g = 1.
const SIZES = [6, 8];
const FIELDS = 11;
const STATES = 3;
const SPEC = `
[chain]
sites = 6
boundary = "periodic"
[levels]
count = 2
tunnelling = 1.0
[ising]
strength = -4
moments = [-0.5, 0.5]
[solve]
states = ${STATES}
[[scan.axis]]
key = "chain.sites"
values = [${SIZES.join(', ')}]
[[scan.axis]]
key = "levels.tunnelling"
from = 0.7
to = 1.2
steps = ${FIELDS}
`;

interface PlotInfo {
  id: string;
  kind: string;
  declaredSeries: number;
  series: { name: string; declaredPoints: number; lineVertices: number; markers: number }[];
  marks: number[];
  cells: number;
  rows: number;
  cols: number;
}

let dir: string;
let reportFile: string;
let browser: Browser;

beforeAll(async () => {
  // First, so that a missing browser is the one line that says how to get one.
  browser = (await launchBrowser()).browser;
  dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-report-'));
  writeFileSync(path.join(dir, 'ising.toml'), SPEC);
  const run = path.join(dir, 'run');
  const scan = runCli(['scan', path.join(dir, 'ising.toml'), '--out', run, '--workers', '2', '--quiet']);
  expect(scan.code, scan.stderr).toBe(0);
  reportFile = path.join(dir, 'report.html');
  const report = runCli(['report', run, '--out', reportFile, '--fit', 'E0/L', '--power', '2']);
  expect(report.code, report.stderr).toBe(0);
  expect(report.stdout).toContain(reportFile);
});

afterAll(async () => {
  await browser?.close();
});

/** Opens a report, returning what the browser complained about, the requests it made and each plot's content. */
async function openReport(file: string, screenshot?: string) {
  const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
  const complaints: string[] = [];
  const requests: string[] = [];
  page.on('console', (m) => {
    if (m.type() === 'error' || m.type() === 'warning') complaints.push(`${m.type()}: ${m.text()}`);
  });
  page.on('pageerror', (e) => complaints.push(`page error: ${e.message}`));
  page.on('request', (r) => {
    if (!r.url().startsWith('file://')) requests.push(r.url());
  });
  await page.goto(`file://${file}`, { waitUntil: 'load' });
  const plots: PlotInfo[] = await page.$$eval('svg[data-plot]', (svgs) =>
    svgs.map((svg) => ({
      id: svg.getAttribute('data-plot')!,
      kind: svg.getAttribute('class')!,
      declaredSeries: Number(svg.getAttribute('data-series') ?? 0),
      series: [...svg.querySelectorAll('g.series')].map((g) => {
        const d = g.querySelector('path.line')?.getAttribute('d') ?? '';
        return {
          name: g.getAttribute('data-name')!,
          declaredPoints: Number(g.getAttribute('data-points')),
          // Vertices of the drawn polyline: one M or L command each.
          lineVertices: (d.match(/[ML]/g) ?? []).length,
          markers: (g.querySelector('path.markers')?.getAttribute('d')?.match(/M/g) ?? []).length,
        };
      }),
      marks: [...svg.querySelectorAll('g.mark')].map((m) => Number(m.getAttribute('data-x'))),
      cells: svg.querySelectorAll('rect.cell').length,
      rows: Number(svg.getAttribute('data-rows') ?? 0),
      cols: Number(svg.getAttribute('data-cols') ?? 0),
    })),
  );
  if (screenshot) {
    mkdirSync(path.dirname(screenshot), { recursive: true });
    await page.screenshot({ path: screenshot, fullPage: true });
  }
  await page.close();
  return { complaints, requests, plots };
}

describe('the report of a scan in headless Chromium', () => {
  it('opens without console errors or requests, with the expected series and points in every plot', async () => {
    const { complaints, requests, plots } = await openReport(reportFile, path.join(ARTIFACTS, 'report-ising.png'));
    expect(complaints).toEqual([]);
    expect(requests).toEqual([]);
    const plot = (id: string) => {
      const p = plots.find((q) => q.id === id);
      expect(p, `plot ${id}`).toBeDefined();
      return p!;
    };
    // Every drawn series is declared, and a line has one vertex per point.
    for (const p of plots.filter((q) => q.kind === 'plot')) {
      expect(p.series).toHaveLength(p.declaredSeries);
      for (const s of p.series) if (s.lineVertices > 0) expect(s.lineVertices).toBe(s.declaredPoints);
    }
    // Observables against the field: one line per chain length, one point per field value.
    for (const id of ['obs-E0-L', 'obs-gap', 'obs-string-width', 'obs-entropy']) {
      const p = plot(id);
      expect(p.series.map((s) => s.name)).toEqual(SIZES.map((L) => `L = ${L}`));
      for (const s of p.series) {
        expect(s.lineVertices).toBe(FIELDS);
        expect(s.markers).toBe(FIELDS);
      }
    }
    // Low spectrum: a plot per chain length, a line per state.
    for (const k of SIZES.keys()) {
      const p = plot(`spectrum-${k}`);
      expect(p.series).toHaveLength(STATES);
      p.series.forEach((s) => expect(s.lineVertices).toBe(FIELDS));
    }
    // Indicators: gap on the grid, fidelity at the midpoints of neighbours, -d2E0/dg2 at interior points.
    const expectedPoints: Record<string, number> = {
      gap: FIELDS,
      fidelity: FIELDS - 1,
      curvature: FIELDS - 2,
      width_slope: FIELDS - 1,
    };
    for (const [name, points] of Object.entries(expectedPoints)) {
      const p = plot(`indicator-${name}`);
      expect(p.series).toHaveLength(SIZES.length);
      p.series.forEach((s) => expect(s.lineVertices).toBe(points));
      expect(p.marks).toHaveLength(SIZES.length);
    }
    // The fidelity peaks of these rings sit below g = 1 and move up with L (Pfeuty-solution values
    // 0.855 for L = 6 and 0.916 for L = 8; see tests/analysis/indicators.test.ts).
    const peaks = plot('indicator-fidelity').marks;
    expect(peaks[0]).toBeCloseTo(0.855, 2);
    expect(peaks[1]).toBeCloseTo(0.916, 2);
    // Two-parameter map: a cell per point.
    const heat = plot('heat-string-width');
    expect([heat.rows, heat.cols, heat.cells]).toEqual([SIZES.length, FIELDS, SIZES.length * FIELDS]);
    // Populations of one point of the largest chain: sites x levels.
    const pops = plot('populations');
    expect([pops.rows, pops.cols, pops.cells]).toEqual([8, 2, 16]);
    // Finite-size fits: three indicators have interior peaks (the gap's minimum is at the end of
    // the scan), each drawn as points and a fitted line; E0/L extrapolated at every field.
    const fits = plot('fit-peaks-L');
    expect(fits.series).toHaveLength(6);
    expect(fits.marks).toHaveLength(3);
    const e0 = plot('fit-E0-L-L');
    expect(e0.series).toHaveLength(1);
    expect(e0.series[0].lineVertices).toBe(FIELDS);
  }, 120_000);

  it('is one self-contained file: no scripts, no links out', () => {
    const html = readFileSync(reportFile, 'utf8');
    expect(html).not.toMatch(/<script|<link|<img|<iframe|@import|url\((?!#)/i);
    expect(html).not.toMatch(/https?:\/\//);
  });
});

// ---------------------------------------------------------------------------------------------
// Large scans: synthetic records, so the size is not limited by solving

function syntheticRecord(x: number, a: number, sites: number): PointRecord {
  // A smooth bump whose centre moves with a: a stand-in with peaks for the indicators to find.
  const e0 = -sites * (1 + 0.3 * Math.tanh((x - a) * 3));
  return {
    energies: [e0, e0 + 0.5 + (x - a) ** 2],
    gap: 0.5 + (x - a) ** 2,
    observables: {
      populations: Array.from({ length: sites }, () => [0.5, 0.5]),
      level_mean: Array.from({ length: sites }, () => 0.5),
      spread: Array.from({ length: sites }, () => 0.25),
      string_width: 0.2 + 0.1 * Math.tanh((x - a) * 2),
      pair_separation: Array.from({ length: sites }, () => Array.from({ length: sites }, () => 0.5)),
    },
    basis: { kind: 'pinned', dimension: 2 ** sites, sites, levels: 2, operator: 'on-the-fly', nonzeros: 0 },
    solver: {
      method: 'lanczos',
      iterations: 10,
      restarts: 0,
      residuals: [0, 0],
      converged: true,
      tolerance: 1e-9,
      degeneracy: 1,
      degeneracy_complete: true,
      seconds: 0,
      memory_estimate_bytes: 0,
    },
  };
}

function largeInput(): ReportInput {
  const as = Array.from({ length: 24 }, (_, k) => 0.5 + k * 0.1);
  const xs = Array.from({ length: 1000 }, (_, k) => k * 0.006);
  const points: AnalysisPoint[] = [];
  for (const a of as)
    for (const x of xs)
      points.push({
        index: points.length,
        params: { 'ising.strength': a, 'exchange.strength': x },
        record: syntheticRecord(x, a, 4),
        overlapPrevious: 0.99999,
      });
  const input = {
    axes: [
      { key: 'ising.strength', values: as },
      { key: 'exchange.strength', values: xs },
    ],
    zip: false,
    points,
  };
  return { ...input, title: 'large synthetic scan', about: [], analysis: analyseScan(input), energyUnitHz: null };
}

describe('the demo report', () => {
  it('is written for the invented scenario and opens cleanly, with indicators and fits against 1/N', async () => {
    const file = path.join(dir, 'demo', 'demo-report.html');
    const lines: string[] = [];
    writeDemoReport((line) => lines.push(line), file);
    expect(lines.join('\n')).toContain(path.resolve(file));
    const { complaints, requests, plots } = await openReport(file);
    expect(complaints).toEqual([]);
    expect(requests).toEqual([]);
    const ids = plots.map((p) => p.id);
    for (const id of [
      'obs-string-width',
      'heat-string-width',
      'spectrum-0',
      'indicator-fidelity',
      'fit-string-width-N',
      'populations',
    ])
      expect(ids).toContain(id);
    // Three ladder lengths: a line each in every plot against V.
    expect(plots.find((p) => p.id === 'obs-string-width')!.series).toHaveLength(3);
  }, 120_000);
});

describe('the demo on the command line', () => {
  it('says in its first lines where it writes its reports, and writes them there', () => {
    const cwd = mkdtempSync(path.join(os.tmpdir(), 'rungchain-demo-'));
    const r = runCli(['demo'], { cwd });
    expect(r.code, r.stderr).toBe(0);
    for (const name of ['demo-report.html', 'demo-trace-report.html']) {
      const expected = path.join(cwd, 'runs', name);
      expect(r.stdout.split('\n').slice(0, 6).join('\n')).toContain(expected);
      expect(readFileSync(expected, 'utf8')).toMatch(/^<!DOCTYPE html>/i);
    }
  }, 120_000);
});

describe('scans without a numeric parameter', () => {
  it('get a table of values per point instead of plots against it', () => {
    const kinds = ['hardcore', 'boson', 'fermion'];
    const points: AnalysisPoint[] = kinds.map((kind, k) => ({
      index: k,
      params: { 'particles.kind': kind },
      record: syntheticRecord(k, 0, 4),
      overlapPrevious: null,
    }));
    const input = { axes: [{ key: 'particles.kind', values: kinds }], zip: false, points };
    const html = renderReport({
      ...input,
      title: 'kinds',
      about: [],
      analysis: analyseScan(input),
      energyUnitHz: null,
    });
    const table = /<table class="values">([\s\S]*?)<\/table>/.exec(html)![1];
    expect(table.match(/<tr>/g)).toHaveLength(1 + kinds.length);
    kinds.forEach((kind) => expect(table).toContain(`<td>${kind}</td>`));
    expect(html).not.toContain('id="observables"');
  });
});

describe('large scans stay light', () => {
  it('caps lines, thins points keeping the extremes, and bins heat maps', async () => {
    const html = renderReport(largeInput());
    const file = path.join(dir, 'large.html');
    writeFileSync(file, html);
    const { complaints, plots } = await openReport(file, path.join(ARTIFACTS, 'report-large.png'));
    expect(complaints).toEqual([]);
    for (const p of plots) {
      expect(p.series.length).toBeLessThanOrEqual(2 * MAX_SERIES);
      for (const s of p.series) expect(s.declaredPoints).toBeLessThanOrEqual(MAX_POINTS);
      expect(p.rows).toBeLessThanOrEqual(MAX_CELLS);
      expect(p.cols).toBeLessThanOrEqual(MAX_CELLS);
    }
    expect(plots.find((p) => p.id === 'obs-string-width')!.series).toHaveLength(MAX_SERIES);
    expect(html).toContain(`showing ${MAX_SERIES} of 24 lines`);
  }, 120_000);

  it('thinning keeps the first, last, smallest and largest values', () => {
    const x = Array.from({ length: 10_000 }, (_, k) => k);
    const y = x.map((k) => Math.sin(k / 300) + (k === 6789 ? 5 : 0) - (k === 1234 ? 5 : 0));
    const thin = decimate(x, y, 400);
    expect(thin.x.length).toBeLessThanOrEqual(400);
    expect(thin.x[0]).toBe(0);
    expect(thin.x[thin.x.length - 1]).toBe(9999);
    expect(thin.x).toContain(6789);
    expect(thin.x).toContain(1234);
    expect([...thin.x].sort((a, b) => a - b)).toEqual(thin.x);
  });
});
