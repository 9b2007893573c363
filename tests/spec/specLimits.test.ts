// Sizes a spec may ask for: scans and traces are counted from their lengths before anything is
// made, refused beyond the documented caps, and `check` sizes a scan without holding it.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { SpecError } from '../../src/errors/errors.js';
import { MAX_EVOLVE_TIMES, MAX_RAMP_STEPS } from '../../src/spec/evolveSection.js';
import { MAX_SCAN_POINTS } from '../../src/spec/scanSection.js';
import { parseSpecText, validateSpec } from '../../src/spec/spec.js';
import { runCli } from '../support/cli.js';

const BASE = '[chain]\nsites = 3\n[levels]\ncount = 2\n';

function specErrorOf(toml: string): SpecError {
  try {
    validateSpec(parseSpecText(toml, 'toml'));
  } catch (e) {
    if (e instanceof SpecError) return e;
    throw e;
  }
  throw new Error('expected a SpecError');
}

function axis(key: string, steps: number): string {
  return `[[scan.axis]]\nkey = "${key}"\nfrom = 0\nto = 1\nsteps = ${steps}\n`;
}

function writeSpec(toml: string): string {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-limits-'));
  const file = path.join(dir, 'spec.toml');
  writeFileSync(file, toml);
  return file;
}

describe('caps on what a spec may ask for (documented in the README)', () => {
  it('an axis longer than the point cap is refused at its steps, before any value is made', () => {
    const e = specErrorOf(BASE + axis('exchange.strength', MAX_SCAN_POINTS + 1));
    expect(e.keyPath).toBe('scan.axis[0].steps');
    expect(e.message).toContain(`at most ${MAX_SCAN_POINTS}`);
  });

  it('a list of values longer than the cap is refused too', () => {
    const values = Array.from({ length: MAX_SCAN_POINTS + 1 }, (_, k) => k).join(',');
    const e = specErrorOf(`${BASE}[[scan.axis]]\nkey = "exchange.strength"\nvalues = [${values}]\n`);
    expect(e.keyPath).toBe('scan.axis[0].values');
  });

  it('a grid whose axes multiply past the cap is refused naming the axis that crosses it', () => {
    // 1000 x 1000 = 10^6 points, each axis within the cap.
    const e = specErrorOf(BASE + axis('exchange.strength', 1000) + axis('levels.tunnelling', 1000));
    expect(e.keyPath).toBe('scan.axis[1]');
    expect(e.message).toContain('1000 x 1000');
    // Zipped axes advance together: 1000 points.
    expect(() =>
      validateSpec(
        parseSpecText(
          `${BASE}[scan]\nzip = true\n` + axis('exchange.strength', 1000) + axis('levels.tunnelling', 1000),
          'toml',
        ),
      ),
    ).not.toThrow();
  });

  it('a grid exactly at the cap is accepted', () => {
    expect(() =>
      validateSpec(
        parseSpecText(BASE + axis('exchange.strength', MAX_SCAN_POINTS / 10) + axis('levels.tunnelling', 10), 'toml'),
      ),
    ).not.toThrow();
  });

  it('evolve.times as { steps } records steps + 1 times, at most the cap', () => {
    const at = (steps: number) => `${BASE}[evolve]\ntimes = { to = 1, steps = ${steps} }\n`;
    expect(() => validateSpec(parseSpecText(at(MAX_EVOLVE_TIMES - 1), 'toml'))).not.toThrow();
    const e = specErrorOf(at(MAX_EVOLVE_TIMES));
    expect(e.keyPath).toBe('evolve.times.steps');
    const list = Array.from({ length: MAX_EVOLVE_TIMES + 1 }, (_, k) => k).join(',');
    expect(specErrorOf(`${BASE}[evolve]\ntimes = [${list}]\n`).keyPath).toBe('evolve.times');
  });

  it('a ramp has at most the cap of pieces', () => {
    const e = specErrorOf(
      `${BASE}[evolve]\ntimes = [1]\nramp = { key = "exchange.strength", from = 0, to = 1, duration = 1, steps = ${MAX_RAMP_STEPS + 1} }\n`,
    );
    expect(e.keyPath).toBe('evolve.ramp.steps');
  });

  it('check refuses a billion-step axis, two million-step axes and a billion-step trace at once, exit 2, one line', () => {
    const cases: [string, string][] = [
      [BASE + axis('exchange.strength', 1e9), 'scan.axis[0].steps'],
      [BASE + axis('exchange.strength', 1e6) + axis('levels.tunnelling', 1e6), 'scan.axis[0].steps'],
      [`${BASE}[evolve]\ntimes = { to = 1, steps = 1000000000 }\n`, 'evolve.times.steps'],
    ];
    for (const [toml, key] of cases) {
      const r = runCli(['check', writeSpec(toml)], { timeout: 30_000 });
      expect(r.code).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toContain(`rungchain: ${key}: `);
    }
  });

  it('a 5 MB value in a spec gives one short line on a pipe, for a bad value and for bad JSON', () => {
    const huge = 'a'.repeat(5_000_000);
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-limits-'));
    const badValue = path.join(dir, 'value.json');
    writeFileSync(badValue, `{"chain": {"sites": 4, "boundary": "${huge}"}, "levels": {"count": 2}}`);
    const badSyntax = path.join(dir, 'syntax.json');
    writeFileSync(badSyntax, `{"chain": {"sites": 4, "boundary": "${huge}" x}}`);
    for (const file of [badValue, badSyntax]) {
      const r = runCli(['check', file], { timeout: 60_000 });
      expect(r.code).toBe(2);
      expect(r.stderr.endsWith('\n')).toBe(true);
      expect(r.stderr.split('\n')).toHaveLength(2);
      expect(r.stderr.length).toBeLessThan(300);
    }
  });
});
