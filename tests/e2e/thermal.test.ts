// `rungchain thermal` end to end: the table, --json, --csv (one row per temperature), check's plan line,
// and bad input as one line with exit code 2.
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../support/cli.js';

const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-thermal-'));
const spec = path.join(dir, 'xx.toml');
// the open XX chain of tests/thermal/exact.test.ts: free fermions with e_k = 2 V cos(pi k/(L+1))
writeFileSync(
  spec,
  [
    '[chain]',
    'sites = 5',
    '[levels]',
    'count = 2',
    'tunnelling = 0',
    '[exchange]',
    'strength = 1',
    '[thermal]',
    'temperatures = [0.5, 2]',
  ].join('\n'),
);

function fermions(T: number): number {
  let e = 0;
  for (let k = 1; k <= 5; k++) {
    const x = 2 * Math.cos((Math.PI * k) / 6);
    e += x / (Math.exp(x / T) + 1);
  }
  return e;
}

describe('rungchain thermal', () => {
  it('--json: one object, the rows at every temperature', () => {
    const r = runCli(['thermal', spec, '--json']);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.method).toBe('exact');
    expect(out.rows.map((x: { temperature: number }) => x.temperature)).toEqual([0.5, 2]);
    out.rows.forEach((row: { energy: number; temperature: number }) =>
      expect(row.energy).toBeCloseTo(fermions(row.temperature), 10),
    );
  });
  it('--csv: a header and one row per temperature', () => {
    const r = runCli(['thermal', spec, '--csv']);
    expect(r.code).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines).toHaveLength(3);
    const header = lines[0].split(',');
    expect(header.slice(0, 6)).toEqual([
      'temperature',
      'temperature_model',
      'energy',
      'specific_heat',
      'entropy',
      'free_energy',
    ]);
    expect(header).toContain('level_mean.4');
    expect(Number(lines[2].split(',')[2])).toBeCloseTo(fermions(2), 10);
  });
  it('the table and the Lanczos method with error bars', () => {
    const r = runCli(['thermal', spec, '--set', 'thermal.method=lanczos']);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('finite-temperature Lanczos');
    expect(r.stdout).toContain('specific heat');
  });
  it('check prints the method and its estimate', () => {
    const r = runCli(['check', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/thermal: exact .*auto/);
    expect(r.stdout).toMatch(/memory estimate/);
  });
  it('bad input: one line naming the key, exit 2', () => {
    const r = runCli(['thermal', spec, '--set', 'thermal.method=fast']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toContain('thermal.method');
    const none = path.join(dir, 'none.toml');
    writeFileSync(none, '[chain]\nsites = 3\n[levels]\ncount = 2\n');
    const missing = runCli(['thermal', none]);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toContain('thermal');
  });
});
