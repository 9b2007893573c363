import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { isGeometric, logScaleAxes, logTicks } from '../../../src/output/report/plotAxes.js';
import { renderHeatMap } from '../../../src/output/report/heatMap.js';
import { renderReport } from '../../../src/output/report/report.js';
import { reportInputFromRun } from '../../../src/output/report/reportInputFromRun.js';
import { loadScanRun } from '../../../src/scan/scanRun.js';
import { runCli } from '../../support/cli.js';

// A log-spaced scan axis is drawn on a log axis: points at log10 of their values, ticks at decades
// (or 1, 2, 5 times them), and the two-parameter maps' cells at their log positions. Placing a
// value at log10 x on a log axis, and ticks at powers of ten, is common practice.

/** The x coordinates of a path's M and L commands. */
function pathXs(d: string): number[] {
  return [...d.matchAll(/[ML](-?[\d.]+),(-?[\d.]+)/g)].map((m) => Number(m[1]));
}

/** One plot's SVG by its data-plot id. */
function svgOf(html: string, id: string): string {
  const m = new RegExp(`<svg [^>]*data-plot="${id}"[^>]*>[\\s\\S]*?</svg>`).exec(html);
  expect(m, `plot ${id}`).not.toBeNull();
  return m![0];
}

/** The x of each tick text under the plot, by its text. */
function xTicks(svg: string): Map<string, number> {
  const ticks = new Map<string, number>();
  for (const m of svg.matchAll(/<text x="([\d.]+)" y="[\d.]+" class="tick" text-anchor="middle">([^<]+)<\/text>/g))
    ticks.set(m[2], Number(m[1]));
  return ticks;
}

function scanRun(axes: string): string {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-logaxes-'));
  const spec = path.join(dir, 'scan.toml');
  writeFileSync(
    spec,
    '[chain]\nsites = 4\nboundary = "periodic"\n[levels]\ncount = 2\ntunnelling = 1\n[exchange]\nstrength = 1.0\nrange = "nearest"\n' +
      `[solve]\nstates = 2\n${axes}`,
  );
  const out = path.join(dir, 'run');
  const run = runCli(['scan', spec, '--out', out, '--quiet']);
  expect(run.code, run.stderr).toBe(0);
  return out;
}

describe('geometric axes', () => {
  it('finds a constant ratio through float noise, in any order', () => {
    expect(isGeometric([1, 2, 4, 8])).toBe(true);
    expect(isGeometric([100, 1, 10])).toBe(true);
    // Ten values a decade apart, each rounded to 15 digits as scan axes are, and others with relative noise 1e-13.
    const decades = Array.from({ length: 10 }, (_, k) => Number((0.01 * 10 ** (k / 3)).toPrecision(15)));
    expect(isGeometric(decades)).toBe(true);
    const noisy = Array.from({ length: 8 }, (_, k) => 0.3 * 1.7 ** k * (1 + (k % 2 === 0 ? 1e-13 : -1e-13)));
    expect(isGeometric(noisy)).toBe(true);
  });

  it('keeps linear, irregular, too short and non-positive axes linear', () => {
    expect(isGeometric([0.5, 1, 1.5, 2])).toBe(false);
    expect(isGeometric([1, 2, 4, 8.1])).toBe(false);
    expect(isGeometric([1, 10])).toBe(false);
    expect(isGeometric([-1, -2, -4])).toBe(false);
    expect(isGeometric([0, 1, 2])).toBe(false);
    // A ratio so close to 1 that the values are evenly spaced to rounding: linear.
    expect(isGeometric([1e9, 1e9 + 1, 1e9 + 2])).toBe(false);
  });

  it('chooses the axes of a run: log spacing or geometric numbers', () => {
    expect(
      logScaleAxes([
        { key: 'a', values: [0.1, 1, 10], spacing: 'values' },
        { key: 'b', values: [1, 2], spacing: 'log' },
        { key: 'c', values: [1, 2, 3], spacing: 'linear' },
        { key: 'd', values: ['x', 'y', 'z'], spacing: 'values' },
      ]),
    ).toEqual(['a', 'b']);
  });
});

describe('log ticks', () => {
  it('puts ticks at the powers of ten, thinned when many', () => {
    expect(logTicks(0.1, 10)).toEqual([0.1, 1, 10]);
    expect(logTicks(0.05, 2000)).toEqual([0.1, 1, 10, 100, 1000]);
    // Seven decades from 1e-3 to 1e3: every second power of ten.
    expect(logTicks(1e-3, 1e3)).toEqual([0.01, 1, 100]);
  });

  it('falls back to 1, 2, 5 times a power of ten, then to every multiple, on short ranges', () => {
    expect(logTicks(1, 5)).toEqual([1, 2, 5]);
    expect(logTicks(0.15, 0.6)).toEqual([0.2, 0.5]);
    expect(logTicks(2, 3)).toEqual([2, 3]);
    // Rounding in an end keeps its tick.
    expect(logTicks(0.1 + 0.2, 0.9)).toEqual([0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]);
  });
});

describe('log axes in the report of a real run', () => {
  it('places the points of a log-spaced scan at log10 of their values, with decade ticks', () => {
    const html = renderReport(
      reportInputFromRun(
        loadScanRun(
          scanRun('[[scan.axis]]\nkey = "exchange.strength"\nfrom = 0.1\nto = 10\nsteps = 5\nspacing = "log"\n'),
        ),
      ),
    );
    const svg = svgOf(html, 'obs-gap');
    expect(svg).toContain('data-x-scale="log"');
    const xs = pathXs(/<path class="line" d="([^"]+)"/.exec(svg)![1]);
    expect(xs).toHaveLength(5);
    const ticks = xTicks(svg);
    expect([...ticks.keys()]).toEqual(['0.1', '1', '10']);
    // Values 0.1 * 10^(k/2): even steps in pixels, the ends on the 0.1 and 10 ticks, the middle on 1.
    const left = ticks.get('0.1')!;
    const right = ticks.get('10')!;
    xs.forEach((x, k) => expect(Math.abs(x - (left + ((right - left) * k) / 4))).toBeLessThanOrEqual(0.02));
    expect(Math.abs(xs[2] - ticks.get('1')!)).toBeLessThanOrEqual(0.01);
    // Every plot against the parameter shares the log axis.
    for (const id of ['spectrum-0', 'indicator-curvature']) expect(svgOf(html, id)).toContain('data-x-scale="log"');
  });

  it('keeps a linear scan on a linear axis', () => {
    const html = renderReport(
      reportInputFromRun(
        loadScanRun(scanRun('[[scan.axis]]\nkey = "exchange.strength"\nfrom = 0.5\nto = 2\nsteps = 4\n')),
      ),
    );
    const svg = svgOf(html, 'obs-gap');
    expect(svg).toContain('data-x-scale="linear"');
    const xs = pathXs(/<path class="line" d="([^"]+)"/.exec(svg)![1]);
    const step = xs[1] - xs[0];
    xs.forEach((x, k) => expect(Math.abs(x - (xs[0] + k * step))).toBeLessThanOrEqual(0.02));
  });

  it('places heat-map cells of a log axis at log positions, with decade ticks', () => {
    const html = renderReport(
      reportInputFromRun(
        loadScanRun(
          scanRun(
            '[[scan.axis]]\nkey = "levels.tunnelling"\nvalues = [0.5, 1, 1.5]\n' +
              '[[scan.axis]]\nkey = "exchange.strength"\nfrom = 0.1\nto = 10\nsteps = 4\nspacing = "log"\n',
          ),
        ),
      ),
    );
    const svg = svgOf(html, 'heat-gap');
    expect(svg).toContain('data-x-scale="log"');
    expect(svg).toContain('data-y-scale="ordered"');
    // Columns at 0.1, 0.464, 2.15, 10: log10 -1, -1/3, 1/3, 1. The tick 1 (log10 0) sits midway
    // between the middle columns' centres, 0.1 and 10 on the end columns' centres.
    const row = [...svg.matchAll(/<rect class="cell" x="([\d.]+)" y="([\d.]+)" width="([\d.]+)"/g)]
      .filter((m) => m[2] === /<rect class="cell" x="[\d.]+" y="([\d.]+)"/.exec(svg)![1])
      .map((m) => Number(m[1]) + (Number(m[3]) - 0.3) / 2);
    expect(row).toHaveLength(4);
    const ticks = xTicks(svg);
    expect([...ticks.keys()]).toEqual(['0.1', '1', '10']);
    expect(Math.abs(ticks.get('0.1')! - row[0])).toBeLessThanOrEqual(0.02);
    expect(Math.abs(ticks.get('10')! - row[3])).toBeLessThanOrEqual(0.02);
    expect(Math.abs(ticks.get('1')! - (row[1] + row[2]) / 2)).toBeLessThanOrEqual(0.02);
  });
});

describe('log heat-map cells', () => {
  it('gives each cell the width of its log10 stretch, reaching halfway to its neighbours', () => {
    const svg = renderHeatMap({
      id: 'log-cells',
      title: 't',
      xLabel: 'x',
      yLabel: 'y',
      xValues: [1, 2, 10],
      yValues: [0],
      z: [[1, 2, 3]],
      zLabel: 'z',
      logX: true,
    });
    const cells = [...svg.matchAll(/<rect class="cell" x="([\d.]+)" y="[\d.]+" width="([\d.]+)"/g)].map((m) => ({
      x: Number(m[1]),
      width: Number(m[2]) - 0.3,
    }));
    // log10 values 0, 0.301, 1: bounds -0.1505, 0.1505, 0.6505, 1.3495, so widths in the ratio 0.301 : 0.5 : 0.699.
    const total = cells.reduce((s, c) => s + c.width, 0);
    const span = 1.349485 + 0.150515;
    expect(cells.map((c) => c.width / total)).toEqual(
      [0.30103 / span, 0.5 / span, 0.69897 / span].map((f) => expect.closeTo(f, 3)),
    );
    // Each cell starts where the one before ends.
    for (let k = 1; k < cells.length; k++)
      expect(Math.abs(cells[k].x - (cells[k - 1].x + cells[k - 1].width))).toBeLessThanOrEqual(0.02);
  });
});
