import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Browser } from 'playwright-core';
import { loadEvolveRun } from '../../../src/dynamics/evolveRun.js';
import { renderTraceReport, type TraceReportInput } from '../../../src/output/report/traceReport.js';
import { traceReportInput, traceReportInputFromRun } from '../../../src/output/report/traceReportInputFromRun.js';
import { writeDemoTraceReport } from '../../../src/demo/report.js';
import { MAX_CELLS } from '../../../src/output/report/heatMap.js';
import { runCli } from '../../support/cli.js';
import { clean, randomPinnedSpec } from '../../support/random.js';
import { randomItinerantSpec } from '../../support/fockReference.js';
import {
  buildDense,
  energyOf,
  evolveDense,
  groundMixture,
  observablesFrom,
  type ModelDescription,
} from '../../support/occupationReference.js';
import { planEvolution, runEvolution } from '../../../src/dynamics/evolution.js';
import { validateSpec, type Spec } from '../../../src/spec/spec.js';
import { launchBrowser } from '../../support/browser.js';

// A single excitation on an XX chain: two levels per site, no microwave tunnelling, nearest-neighbour
// exchange V only. By docs/model.md the exchange moves the one excited molecule to a neighbour with
// amplitude V, so it is a free particle hopping on the chain (tight binding), and the population of
// level 1 at site j is the textbook propagator |<j|exp(-iHt)|i>|^2 = J_{j-i}(2Vt)^2 (Bessel functions
// of the first kind) until the front reaches the ends; with the ends, the method of images (the
// chain's standing waves sin(k(j+1)), k = pi m/(L+1), summed by Poisson's formula) adds mirror
// sources at -(i+2) and 2L-i, and repeats them with period 2(L+1).
const SITES = 14;
const START = 6;
const V = 1;
const STEPS = 40;
const END = 4;

const XX_SPEC = `
[chain]
sites = ${SITES}
boundary = "open"
[levels]
count = 2
tunnelling = 0
[exchange]
strength = ${V}
range = "nearest"
[evolve]
initial = [${Array.from({ length: SITES }, (_, j) => (j === START ? 1 : 0)).join(', ')}]
times = { from = 0, to = ${END}, steps = ${STEPS} }
tolerance = 1e-10
`;

/** J_n(x) from its power series sum_k (-1)^k (x/2)^(2k+n) / (k! (k+n)!) (Abramowitz and Stegun 9.1.10). */
function besselJ(n: number, x: number): number {
  const order = Math.abs(n);
  let term = 1;
  for (let k = 1; k <= order; k++) term *= x / 2 / k;
  let sum = term;
  for (let k = 0; k < 200; k++) {
    term *= -((x / 2) ** 2) / ((k + 1) * (k + 1 + order));
    sum += term;
    if (Math.abs(term) < 1e-18 * Math.max(1, Math.abs(sum))) break;
  }
  // J_{-n} = (-1)^n J_n (A&S 9.1.5).
  return n < 0 && order % 2 === 1 ? -sum : sum;
}

/** <j|exp(-iHt)|i> = (-i)^d J_d(2Vt) on the infinite chain, d = j - i, as [re, im]. */
function freeAmplitude(d: number, x: number): [number, number] {
  const j = besselJ(d, x);
  const phase = [
    [1, 0],
    [0, -1],
    [-1, 0],
    [0, 1],
  ][((d % 4) + 4) % 4];
  return [phase[0] * j, phase[1] * j];
}

/** The open chain's propagator by the method of images (see the header). */
function openChainProbability(i: number, j: number, x: number, sites: number): number {
  let re = 0;
  let im = 0;
  const period = 2 * (sites + 1);
  for (let p = -3; p <= 3; p++) {
    const direct = freeAmplitude(j - i + p * period, x);
    const mirror = freeAmplitude(j + i + 2 + p * period, x);
    re += direct[0] - mirror[0];
    im += direct[1] - mirror[1];
  }
  return re * re + im * im;
}

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-trace-report-'));

let dir: string;
let run: string;
let input: TraceReportInput;
let html: string;
let evolveStderr: string;
let browser: Browser;

beforeAll(async () => {
  // First, so that a missing browser is the one line that says how to get one.
  browser = (await launchBrowser()).browser;
  dir = tmp();
  writeFileSync(path.join(dir, 'xx.toml'), XX_SPEC);
  run = path.join(dir, 'run');
  const evolved = runCli(['evolve', path.join(dir, 'xx.toml'), '--out', run]);
  expect(evolved.code, evolved.stderr).toBe(0);
  evolveStderr = evolved.stderr;
  input = traceReportInputFromRun(loadEvolveRun(run));
  html = renderTraceReport(input);
});

afterAll(async () => {
  await browser?.close();
});

function svgOf(page: string, id: string): string {
  const m = new RegExp(`<svg[^>]*data-plot="${id}"[\\s\\S]*?</svg>`).exec(page);
  expect(m, `plot ${id}`).not.toBeNull();
  return m![0];
}

describe('the report of a real trace run folder', () => {
  it('draws the light cone with one row per recorded time and one column per site', () => {
    const trace = input.traces[0];
    expect(trace.times).toHaveLength(STEPS + 1);
    expect(trace.levelMap).toHaveLength(STEPS + 1);
    for (const row of trace.levelMap) expect(row).toHaveLength(SITES);
    const map = svgOf(html, 'light-cone-0');
    expect(map).toContain(`data-rows="${STEPS + 1}"`);
    expect(map).toContain(`data-cols="${SITES}"`);
    expect(map.match(/<rect class="cell"/g)).toHaveLength((STEPS + 1) * SITES);
    // Pinned chains have no density map.
    expect(html).not.toContain('data-plot="density-cone-0"');
  });

  it('carries site populations that follow J_{j-i}(2Vt)^2, and the open chain’s mirror images later', () => {
    const trace = input.traces[0];
    trace.times.forEach((t, k) => {
      const x = 2 * V * t;
      trace.levelMap[k].forEach((p, j) => {
        // Two levels: the mean level is the population of level 1. The propagation is exact to its
        // tolerance (1e-10 in the state, so at most about 2e-10 in a probability).
        expect(Math.abs(p - openChainProbability(START, j, x, SITES)), `t = ${t}, site ${j}`).toBeLessThan(1e-9);
        // Before the front reaches the ends (2Vt <= 1.5) the nearest mirror source is 8 sites away
        // and J_8(1.5) < 3e-6 (series above): the infinite chain's formula holds to 1e-6.
        if (x <= 1.5) expect(Math.abs(p - besselJ(j - START, x) ** 2), `t = ${t}, site ${j}`).toBeLessThan(1e-6);
      });
      // The return probability is the j = i case: J_0(2Vt)^2 on the infinite chain, with images here.
      expect(Math.abs(trace.returnProbability[k] - openChainProbability(START, START, x, SITES))).toBeLessThan(1e-9);
      // One excitation: string width (1/L) sum n_i^2 - (1/L^2)(sum n_i)^2 = 1/L - 1/L^2 (docs/model.md);
      // the exchange has no diagonal, so the energy of a state with one excited site is 0 throughout.
      expect(trace.stringWidth[k]).toBeCloseTo(1 / SITES - 1 / SITES ** 2, 12);
      expect(Math.abs(trace.energy[k])).toBeLessThan(1e-9);
    });
    // The cone really opens: at 2Vt = 2 the starting site keeps J_0(2)^2 = 0.0501 (J_0(2) = 0.2239,
    // from memory of the handbook's table), the rest has moved out.
    expect(trace.levelMap[10][START]).toBeCloseTo(0.0501, 4);
  });

  it('plots the return probability, string width and energy against time, and the error bounds', () => {
    for (const id of ['trace-return-probability', 'trace-string-width', 'trace-energy', 'trace-error-bound']) {
      const svg = svgOf(html, id);
      expect(svg).toContain('data-series="1"');
      expect(svg).toContain(`data-points="${STEPS + 1}"`);
    }
    expect(html).toContain('<table class="trace-stats">');
    // The spec summary: the sentence and the keys as run.
    expect(html).toContain(`${SITES} sites (open chain) × 2 levels`);
    expect(html).toContain('<code>exchange.strength</code>');
    expect(html).not.toMatch(/<script|<link|<img|<iframe|@import|url\((?!#)/i);
  });

  it('opens in headless Chromium without console errors or requests, every cell drawn', async () => {
    const file = path.join(dir, 'trace-report.html');
    writeFileSync(file, html);
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
    const cells = await page.$$eval('svg[data-plot="light-cone-0"] rect.cell', (r) => r.length);
    await page.close();
    expect(complaints).toEqual([]);
    expect(requests).toEqual([]);
    expect(cells).toBe((STEPS + 1) * SITES);
  }, 60_000);
});

describe('an itinerant particle', () => {
  it('draws the density against time, which follows the same propagator (hopping t in real space)', () => {
    // One hard-core boson in level 0, no tunnelling: it hops between neighbouring sites with
    // amplitude -t (docs/model.md), a free particle again, so <N_j>(t) = |<j|exp(-iHt)|i>|^2 with
    // x = 2 t time (the sign of the hopping drops out of the probabilities).
    const hopDir = tmp();
    const sites = 10;
    const start = 4;
    const spec = path.join(hopDir, 'hop.toml');
    writeFileSync(
      spec,
      `[chain]\nsites = ${sites}\nboundary = "open"\n[levels]\ncount = 2\ntunnelling = 0\n` +
        '[particles]\nkind = "hardcore"\nnumber = 1\nhopping = 1\n' +
        `[evolve]\ninitial = [${Array.from({ length: sites }, (_, j) => (j === start ? 0 : -1)).join(', ')}]\n` +
        'times = { from = 0, to = 3, steps = 12 }\ntolerance = 1e-10\n',
    );
    const out = path.join(hopDir, 'run');
    expect(runCli(['evolve', spec, '--out', out, '--quiet']).code).toBe(0);
    const hop = traceReportInputFromRun(loadEvolveRun(out));
    const trace = hop.traces[0];
    expect(trace.densityMap).not.toBeNull();
    trace.times.forEach((t, k) =>
      trace.densityMap![k].forEach((n, j) =>
        expect(Math.abs(n - openChainProbability(start, j, 2 * t, sites)), `t = ${t}, site ${j}`).toBeLessThan(1e-9),
      ),
    );
    // The particle stays in level 0: no level to climb, only the density map is drawn.
    const page = renderTraceReport(hop);
    const map = svgOf(page, 'density-cone-0');
    expect(map).toContain('data-rows="13"');
    expect(map).toContain(`data-cols="${sites}"`);
    expect(page).not.toContain('data-plot="light-cone-0"');
  });
});

// ---------------------------------------------------------------------------------------------
// Differential: what the report draws per site, against the dense build of docs/model.md

/** The dense reference's description of a validated spec (tests/support/occupationReference.ts). */
function modelOf(spec: Spec): ModelDescription {
  return {
    sites: spec.chain.sites,
    periodic: spec.chain.boundary === 'periodic',
    levels: spec.levels.count,
    ring: spec.levels.boundary === 'ring',
    tunnelling: spec.levels.tunnelling,
    phase: spec.levels.phase,
    detuning: spec.levels.detuning,
    exchange: spec.exchange.strength,
    exchangeRange: spec.exchange.range,
    exchangeCutoff: Number.isFinite(spec.exchange.cutoff) ? spec.exchange.cutoff : null,
    weights: spec.exchange.weights,
    ising: spec.ising.strength,
    moments: spec.ising.moments,
    isingRange: spec.ising.range,
    isingCutoff: Number.isFinite(spec.ising.cutoff) ? spec.ising.cutoff : null,
    kind: spec.particles.kind,
    particles: spec.particles.kind === 'pinned' ? spec.chain.sites : spec.particles.number,
    hopping: spec.particles.hopping,
    maxPerSite: spec.particles.maxPerSite,
    onsite: spec.particles.onsite,
  };
}

const DIFFERENTIAL_CASES: { name: string; raw: () => Record<string, unknown>; initial: number[] }[] = [
  { name: 'pinned, 3 sites x 3 levels', raw: () => clean(randomPinnedSpec(71, 3, 3)), initial: [0, 2, 1] },
  { name: 'pinned, 4 sites x 2 levels', raw: () => clean(randomPinnedSpec(72, 4, 2)), initial: [1, 0, 0, 1] },
  {
    name: 'hard-core bosons, 4 sites x 2 levels, 2 particles',
    raw: () => randomItinerantSpec(73, 'hardcore', 4, 2, 2, { complex: true }),
    initial: [-1, 1, 0, -1],
  },
  {
    name: 'soft-core bosons, 3 sites x 2 levels, 2 particles',
    raw: () => randomItinerantSpec(74, 'boson', 3, 2, 2, { maxPerSite: 2 }),
    initial: [0, -1, 1],
  },
  {
    name: 'fermions, 3 sites x 3 levels, 2 particles',
    raw: () => randomItinerantSpec(75, 'fermion', 3, 3, 2, { complex: true }),
    initial: [2, -1, 0],
  },
  {
    // Degenerate: nothing moves the particles, every level of the product state stays put.
    name: 'pinned, no coupling at all',
    raw: () => ({
      chain: { sites: 3 },
      levels: { count: 3, tunnelling: 0 },
      exchange: { strength: 0 },
    }),
    initial: [2, 0, 1],
  },
];

describe('the report’s per-site maps against a dense build of docs/model.md', () => {
  it.each(DIFFERENTIAL_CASES)('$name', ({ raw: make, initial }) => {
    const raw = make();
    delete (raw.solve as Record<string, unknown> | undefined)?.entanglement;
    const times = [0, 0.4, 1.1];
    raw.evolve = { initial, times, tolerance: 1e-11 };
    const spec = validateSpec(structuredClone(raw));
    const result = runEvolution(planEvolution(raw, spec));
    const report = traceReportInput({
      title: 'differential',
      about: [],
      spec: raw,
      traces: [
        {
          point: 0,
          params: {},
          status: 'done',
          frames: result.frames.map((f) => ({ ...f, time_ms: null })),
          stats: result.stats,
          notes: [],
        },
      ],
      keys: [],
      energyUnitHz: null,
    });
    const view = report.traces[0];
    const model = modelOf(spec);
    const h = buildDense(model);
    const g = groundMixture(h, 1e-10);
    const N = model.levels;
    const start = h.configs.findIndex((occ) =>
      initial.every((n, i) => (n < 0 ? occ.slice(i * N, i * N + N).every((k) => k === 0) : occ[i * N + n] === 1)),
    );
    expect(start).toBeGreaterThanOrEqual(0);
    const re0 = new Float64Array(h.dim);
    const im0 = new Float64Array(h.dim);
    re0[start] = 1;
    times.forEach((t, k) => {
      const psi = evolveDense(h, g, re0, im0, t);
      const p = psi.re.map((x, s) => x * x + psi.im[s] * psi.im[s]);
      const ref = observablesFrom(model, h.configs, p);
      // The map's quantity by its definition: the level summed over the particles at each site.
      const summed = ref.populations.map((row) => row.reduce((sum, q, n) => sum + n * q, 0));
      view.levelMap[k].forEach((v, i) => expect(Math.abs(v - summed[i]), `t = ${t}, site ${i}`).toBeLessThan(1e-8));
      if (model.kind === 'pinned') {
        expect(view.densityMap).toBeNull();
        // For pinned chains it is the mean level.
        view.levelMap[k].forEach((v, i) => expect(Math.abs(v - ref.level_mean[i])).toBeLessThan(1e-8));
      } else {
        view.densityMap![k].forEach((v, i) => expect(Math.abs(v - ref.density[i])).toBeLessThan(1e-8));
      }
      expect(Math.abs(view.returnProbability[k] - (psi.re[start] ** 2 + psi.im[start] ** 2))).toBeLessThan(1e-8);
      expect(Math.abs(view.stringWidth[k] - ref.string_width)).toBeLessThan(1e-8);
      expect(Math.abs(view.energy[k] - energyOf(h, psi.re, psi.im))).toBeLessThan(1e-8);
    });
    expect(view.times).toEqual(times);
    expect(view.errorBound).toHaveLength(times.length);
  });
});

describe('long traces', () => {
  it('average neighbouring times into at most MAX_CELLS rows, and say so', () => {
    // The heat map's documented thinning: more than MAX_CELLS times are averaged in blocks.
    const times = Array.from({ length: 3 * MAX_CELLS + 1 }, (_, k) => k * 0.01);
    const long = {
      ...input,
      traces: [{ ...input.traces[0], times, timesMs: null, levelMap: times.map(() => Array<number>(SITES).fill(0.5)) }],
    };
    const map = svgOf(renderTraceReport(long), 'light-cone-0');
    const rows = Number(/data-rows="(\d+)"/.exec(map)![1]);
    expect(rows).toBeLessThanOrEqual(MAX_CELLS);
    expect(rows).toBeGreaterThan(MAX_CELLS / 2);
    expect(map).toContain(`data-cols="${SITES}"`);
    expect(renderTraceReport(long)).toContain(
      `${times.length} x ${SITES} grid averaged into at most ${MAX_CELLS} cells per side`,
    );
  });
});

describe('a run of several traces', () => {
  it('draws a line per trace, a light cone per trace, and one trace with --point', () => {
    const scanDir = tmp();
    const spec = path.join(scanDir, 'scan.toml');
    writeFileSync(
      spec,
      XX_SPEC.replace(`sites = ${SITES}`, 'sites = 6')
        .replace(/initial = \[[^\]]*\]/, 'initial = [0, 0, 1, 0, 0, 0]')
        .replace(`steps = ${STEPS}`, 'steps = 8') + '[[scan.axis]]\nkey = "exchange.strength"\nvalues = [0.5, 1]\n',
    );
    const out = path.join(scanDir, 'run');
    expect(runCli(['evolve', spec, '--out', out, '--quiet']).code).toBe(0);
    const contents = loadEvolveRun(out);
    const both = renderTraceReport(traceReportInputFromRun(contents));
    expect(svgOf(both, 'trace-return-probability')).toContain('data-series="2"');
    expect(both).toContain('data-plot="light-cone-0"');
    expect(both).toContain('data-plot="light-cone-1"');
    const one = runCli(['report', out, '--point', '1', '--out', path.join(scanDir, 'one.html')]);
    expect(one.code, one.stderr).toBe(0);
    const page = readFileSync(path.join(scanDir, 'one.html'), 'utf8');
    expect(page).toContain('data-plot="light-cone-1"');
    expect(page).not.toContain('data-plot="light-cone-0"');
  });
});

describe('report RUN on the command line', () => {
  it('evolve --out ends by naming the report command', () => {
    expect(evolveStderr).toMatch(new RegExp(`HTML report: .*report ${run.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}\\n`));
  });

  it('detects a trace folder and writes its report', () => {
    const r = runCli(['report', run]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain(`report written to ${path.join(run, 'report.html')} (1 of 1 traces finished)`);
    const page = readFileSync(path.join(run, 'report.html'), 'utf8');
    expect(page).toContain('data-plot="light-cone-0"');
    expect(page).not.toContain('id="indicators"');
  });

  it('refuses the flags of scan reports on a trace with one line naming the flag (exit 2)', () => {
    for (const [flag, ...value] of [
      ['--parameter', 'exchange.strength'],
      ['--fit', 'E0'],
      ['--power', '2'],
      ['--terms', '3'],
    ]) {
      const r = runCli(['report', run, flag, ...value, '--out', path.join(dir, 'refused.html')]);
      expect(r.code, flag).toBe(2);
      expect(r.stderr.trim().split('\n'), flag).toHaveLength(1);
      expect(r.stderr).toMatch(new RegExp(`^rungchain: ${flag}: applies to the report of a scan`));
    }
    const point = runCli(['report', run, '--point', '3', '--out', path.join(dir, 'refused.html')]);
    expect(point.code).toBe(2);
    expect(point.stderr).toMatch(/^rungchain: --point 3: no trace with recorded times has that index/);
  });

  it('still writes the scan report for a scan folder', () => {
    const scanDir = tmp();
    const spec = path.join(scanDir, 'scan.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 4\n[levels]\ncount = 2\ntunnelling = 1\n[exchange]\nstrength = 1\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [0.5, 1, 2]\n',
    );
    const out = path.join(scanDir, 'run');
    expect(runCli(['scan', spec, '--out', out, '--quiet']).code).toBe(0);
    const r = runCli(['report', out, '--fit', 'E0']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain('(3 of 3 points)');
    const page = readFileSync(path.join(out, 'report.html'), 'utf8');
    expect(page).toContain('id="indicators"');
    expect(page).not.toContain('light-cone');
  });
});

describe('the demo trace report', () => {
  it('is written for the invented quench and carries a light cone', () => {
    const file = path.join(tmp(), 'demo-trace-report.html');
    const lines: string[] = [];
    writeDemoTraceReport((line) => lines.push(line), file);
    expect(lines.join('\n')).toContain(path.resolve(file));
    const page = readFileSync(file, 'utf8');
    expect(page).toContain('data-plot="light-cone-0"');
    expect(page).toContain('time t [ms]');
  });
});
