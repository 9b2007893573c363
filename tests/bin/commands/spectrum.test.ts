// `spectrum SPEC` as a user runs it (the built command line): the table, --json, tidy --csv, and
// bad input as one line with exit code 2.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../../support/cli.js';

const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'rungchain-spectrum-'));
afterAll(() => fs.rmSync(folder, { recursive: true, force: true }));

// A dressed two-level molecule probed in quadrature: one line at 2J = 2 of weight 1 (Autler-Townes; common practice).
const spec = path.join(folder, 'molecule.json');
fs.writeFileSync(
  spec,
  JSON.stringify({
    chain: { sites: 1 },
    levels: { count: 2, tunnelling: 1 },
    spectrum: { probe: { link: 0, phase: Math.PI / 2 }, frequencies: { from: 0, to: 4, steps: 5 }, broadening: 0.1 },
  }),
);

describe('rungchain spectrum', () => {
  it('prints the table with the weight, the lines and the curve', () => {
    const r = runCli(['spectrum', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('weight (sum rule <O+ O> - |<0|O|0>|^2) 1;');
    expect(r.stdout).toContain('exact (Krylov space exhausted)');
    expect(r.stdout).toMatch(/position\s+weight\s+residual\n-+\s+-+\s+-+\n2\s+1\s+0\n/);
  });

  it('check adds the continued fraction memory after the ground solve', () => {
    const r = runCli(['check', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/spectrum memory {2}\S+ \S+ after the ground solve/);
    expect(r.stdout).toContain('probed_states');
  });

  it('check of a scan with [spectrum] counts the spectrum after each point (issue 22)', () => {
    const scan = path.join(folder, 'checked-scan.json');
    const raw = JSON.parse(fs.readFileSync(spec, 'utf8'));
    fs.writeFileSync(scan, JSON.stringify({ ...raw, scan: { axis: [{ key: 'levels.detuning', values: [0, 0.5] }] } }));
    const single = runCli(['check', spec]).stdout.match(/spectrum memory {2}(\S+ \S+)/)![1];
    const r = runCli(['check', scan]);
    expect(r.code).toBe(0);
    // every point has the single spec's size, so the spectrum's peak is the single spec's figure
    expect(r.stdout).toContain(`spectrum memory  ${single} after the ground solve at most`);
    // a limit between the solve's estimate and the spectrum's: the points would fail at their spectrum
    const solveBytes = runCli(['check', scan, '--max-memory', '100GB']).stdout.match(
      /memory estimate {2}(\S+ \S+)/,
    )![1];
    const tight = runCli(['check', scan, '--max-memory', solveBytes.replace(' ', '')]);
    expect(tight.stdout).toMatch(/2 points exceed the memory limit/);
  });

  it('--json is one object on stdout', () => {
    const r = runCli(['spectrum', spec, '--json']);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.frequencies).toEqual([0, 1, 2, 3, 4]);
    expect(out.intensity).toHaveLength(5);
    // the Lorentzian's height at its centre: weight / (pi eta)
    expect(out.intensity[2]).toBeCloseTo(1 / (Math.PI * 0.1), 8);
    expect(out.lines).toHaveLength(1);
    expect(out.continued_fraction.converged).toBe(true);
  });

  it('--csv is tidy: frequency,intensity,error rows, or position,weight,residual with --csv lines', () => {
    const curve = runCli(['spectrum', spec, '--csv']);
    expect(curve.code).toBe(0);
    const rows = curve.stdout.trim().split('\n');
    expect(rows[0]).toBe('frequency,intensity,error');
    expect(rows).toHaveLength(6);
    const lines = runCli(['spectrum', spec, '--csv', 'lines']);
    expect(lines.stdout.trim().split('\n')[0]).toBe('position,weight,residual');
    expect(Number(lines.stdout.trim().split('\n')[1].split(',')[0])).toBeCloseTo(2, 10);
  });

  it('at a temperature: the table names the method, Lanczos error bars show as +- and in the CSV error column', () => {
    const exact = runCli(['spectrum', spec, '--set', 'spectrum.temperature=1']);
    expect(exact.code).toBe(0);
    expect(exact.stdout).toContain('temperature 1 (k_B T = 1 in model units), exact (every eigenpair)');
    const set = ['--set', 'spectrum.temperature=1', '--set', 'spectrum.method="lanczos"'];
    const table = runCli(['spectrum', spec, ...set]);
    expect(table.code).toBe(0);
    expect(table.stdout).toContain('finite-temperature Lanczos (20 random vectors, 100 steps, seed 1');
    expect(table.stdout).toMatch(/weight \(sum rule <O\+ O>_T - elastic\) \S+ \+- /);
    expect(table.stdout).toMatch(/frequency\s+intensity\s+error\n/);
    expect(runCli(['check', spec, ...set]).stdout).toMatch(
      /spectrum memory {2}\S+ \S+ after the ground solve, at the temperature \(Lanczos method\)/,
    );
    expect(runCli(['check', spec, '--set', 'spectrum.temperature=1']).stdout).toContain('(exact method)');
    const rows = runCli(['spectrum', spec, ...set, '--csv'])
      .stdout.trim()
      .split('\n');
    expect(rows[0]).toBe('frequency,intensity,error');
    // the line at 2 J = 2 has a spread over the random vectors
    expect(Number(rows[3].split(',')[2])).toBeGreaterThan(0);
  });

  it('refuses bad input in one line with exit code 2', () => {
    const bad = runCli(['spectrum', spec, '--csv', 'poles']);
    expect(bad.code).toBe(2);
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
    expect(bad.stderr).toContain('--csv');
    const link = runCli(['spectrum', spec, '--set', 'spectrum.probe.link=3']);
    expect(link.code).toBe(2);
    expect(link.stderr).toContain('spectrum.probe.link');
    const missing = runCli(['spectrum', spec, '--set', 'spectrum=null']);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toContain('spectrum');
    const hot = runCli([
      'spectrum',
      spec,
      '--set',
      'spectrum.temperature=0.1',
      '--set',
      'spectrum.temperature_unit="nK"',
    ]);
    expect(hot.code).toBe(2);
    expect(hot.stderr.trim().split('\n')).toHaveLength(1);
    expect(hot.stderr).toContain('spectrum.temperature_unit');
  });
});

describe('spectra in scans', () => {
  const scanSpec = path.join(folder, 'scan.json');
  const run = path.join(folder, 'run');
  fs.writeFileSync(
    scanSpec,
    JSON.stringify({
      chain: { sites: 4, boundary: 'periodic' },
      levels: { count: 3, tunnelling: 1 },
      spectrum: { probe: { link: 0, momentum: 1 }, frequencies: { from: 0, to: 6, steps: 31 }, broadening: 0.1 },
      scan: { axis: [{ key: 'exchange.strength', values: [0, 0.8, 1.6] }] },
    }),
  );

  it('each point holds the spectrum `spectrum` prints for it; summary --long has a row per point and frequency; the report draws them', () => {
    const scan = runCli(['scan', scanSpec, '--out', run]);
    expect(scan.code).toBe(0);
    const summary = JSON.parse(runCli(['summary', run, '--json']).stdout) as Record<string, any>[];
    expect(summary).toHaveLength(3);
    for (const point of summary) {
      const alone = JSON.parse(
        runCli([
          'spectrum',
          scanSpec,
          '--set',
          'scan=null',
          '--set',
          `exchange.strength=${point['exchange.strength']}`,
          '--json',
        ]).stdout,
      );
      expect(point.spectrum.frequencies).toEqual(alone.frequencies);
      point.spectrum.intensity.forEach((x: number, k: number) => expect(x).toBeCloseTo(alone.intensity[k], 9));
      expect(point.spectrum.weight).toBeCloseTo(alone.weight, 10);
    }
    const long = runCli(['summary', run, '--long', '--csv']).stdout.trim().split('\n');
    const header = long[0].split(',');
    expect(header).toContain('frequency');
    const rows = long.slice(1).filter((l) => l.split(',')[header.indexOf('observable')] === 'spectrum');
    expect(rows).toHaveLength(3 * 31);
    const report = path.join(folder, 'report.html');
    expect(runCli(['report', run, '--out', report]).code).toBe(0);
    const html = fs.readFileSync(report, 'utf8');
    expect(html).toContain('id="response"');
    expect(html).toContain('spectrum A(ω) against');
  });

  it('at a temperature too: each point holds its finite-temperature spectrum with error bars (Lanczos)', () => {
    const hot = path.join(folder, 'hot-run');
    const set = [
      '--set',
      'spectrum.temperature=0.7',
      '--set',
      'spectrum.method="lanczos"',
      '--set',
      'spectrum.vectors=6',
    ];
    expect(runCli(['scan', scanSpec, '--out', hot, ...set]).code).toBe(0);
    const summary = JSON.parse(runCli(['summary', hot, '--json']).stdout) as Record<string, any>[];
    expect(summary).toHaveLength(3);
    for (const point of summary) {
      const alone = JSON.parse(
        runCli([
          'spectrum',
          scanSpec,
          ...set,
          '--set',
          'scan=null',
          '--set',
          `exchange.strength=${point['exchange.strength']}`,
          '--json',
        ]).stdout,
      );
      // the same seeds give the same random vectors, so the same estimate and error bars
      expect(point.spectrum.method).toBe('lanczos');
      point.spectrum.intensity.forEach((x: number, k: number) => expect(x).toBeCloseTo(alone.intensity[k], 9));
      point.spectrum.intensity_error.forEach((x: number, k: number) =>
        expect(x).toBeCloseTo(alone.intensity_error[k], 9),
      );
      expect(point.spectrum.weight_error).toBeGreaterThan(0);
    }
    const long = runCli(['summary', hot, '--long', '--csv']).stdout.trim().split('\n');
    const header = long[0].split(',');
    expect(long.slice(1).filter((l) => l.split(',')[header.indexOf('observable')] === 'spectrum')).toHaveLength(3 * 31);
  });
});
