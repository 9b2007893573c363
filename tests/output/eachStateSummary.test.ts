// Summaries of a scan solved with solve.observables = "each": `summary --json` carries each point's
// `states`, `--csv` each state's scalars as `states.<k>.<name>` columns, `--long` each state's
// per-site rows under a `state` column. Values checked against ml-matrix's dense eigenvectors of the
// plain dense Hamiltonian of tests/support/reference.ts (written from docs/model.md).

import { beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { EigenvalueDecomposition } from 'ml-matrix';
import { parseSpecText, validateSpec } from '../../src/spec/spec.js';
import { runCli } from '../support/cli.js';
import { densePinnedHamiltonian } from '../support/reference.js';

type Row = Record<string, any>;

const SITES = 3;
const LEVELS = 3;
const STATES = 3;
// An open chain with detuning: no level flip, no translation, so (checked below) no degenerate level
// among the states compared; its reflection sectors split nothing.
const SPEC = (observables: string) => `
[chain]
sites = ${SITES}
[levels]
count = ${LEVELS}
tunnelling = 1.0
detuning = [0, 0.35, -0.2]
[exchange]
strength = 1.0
[solve]
states = ${STATES}
observables = "${observables}"
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 2.0]
`;

/** Each of the lowest dense eigenstates: energy, populations[i][n] and string width (docs/model.md). */
function denseStates(strength: number): { energy: number; populations: number[][]; string_width: number }[] {
  const raw = parseSpecText(SPEC('each'), 'toml');
  delete raw.scan;
  (raw.exchange as Row).strength = strength;
  const h = densePinnedHamiltonian(validateSpec(raw));
  // Real couplings: H is real symmetric.
  const evd = new EigenvalueDecomposition(h.re, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k] as const).sort((a, b) => a[0] - b[0]);
  // No degeneracy among the states compared, nor with the next one.
  for (let k = 0; k < STATES; k++) expect(order[k + 1][0] - order[k][0]).toBeGreaterThan(1e-3);
  return order.slice(0, STATES).map(([energy, k]) => {
    const v = evd.eigenvectorMatrix.getColumn(k);
    const populations = Array.from({ length: SITES }, () => new Array<number>(LEVELS).fill(0));
    let width = 0;
    v.forEach((amplitude, s) => {
      const p = amplitude * amplitude;
      const digits: number[] = [];
      for (let i = 0, t = s; i < SITES; i++, t = Math.floor(t / LEVELS)) digits.push(t % LEVELS);
      digits.forEach((n, i) => (populations[i][n] += p));
      // (1/L) sum_i (n_i - nbar)^2 of the configuration, averaged (docs/model.md).
      const mean = digits.reduce((a, b) => a + b, 0) / SITES;
      width += (p * digits.reduce((a, n) => a + (n - mean) ** 2, 0)) / SITES;
    });
    return { energy, populations, string_width: width };
  });
}

function parseCsv(text: string): Row[] {
  const [header, ...lines] = text.trim().split('\n');
  const names = header.split(',');
  return lines.map((line) => Object.fromEntries(line.split(',').map((v, k) => [names[k], v])));
}

let dir: string;

function scanRun(observables: string): string {
  writeFileSync(path.join(dir, `${observables}.toml`), SPEC(observables));
  const run = path.join(dir, observables);
  const r = runCli(['scan', path.join(dir, `${observables}.toml`), '--out', run, '--workers', '1', '--quiet']);
  expect(r.code).toBe(0);
  return run;
}

let each: string;
let ground: string;

beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-each-summary-'));
  each = scanRun('each');
  ground = scanRun('ground');
});

describe('summaries of a scan with solve.observables = "each"', () => {
  it('--json carries every state with its own observables, as the dense eigenvectors give them', () => {
    const r = runCli(['summary', each, '--json']);
    expect(r.code).toBe(0);
    const rows: Row[] = JSON.parse(r.stdout);
    expect(rows).toHaveLength(2);
    for (const row of rows) {
      const reference = denseStates(row['exchange.strength']);
      expect(row.states).toHaveLength(STATES);
      row.states.forEach((s: Row, k: number) => {
        expect(s.index).toBe(k);
        expect(s.energy).toBeCloseTo(reference[k].energy, 9);
        expect(s.sector).not.toBeNull();
        expect(s.mixture_of).toBeUndefined();
        // Eigenvector error ~ residual / gap (common practice): the default tolerance 1e-9 over gaps above 1e-3.
        expect(Math.abs(s.observables.string_width - reference[k].string_width)).toBeLessThan(1e-5);
        s.observables.populations.forEach((p: number[], i: number) =>
          p.forEach((q, n) => expect(Math.abs(q - reference[k].populations[i][n])).toBeLessThan(1e-5)),
        );
      });
      expect(row.states[STATES - 1].level_incomplete).toBe(true);
    }
  });

  it('--csv has each state scalar as a states.<k>.<name> column equal to the JSON', () => {
    const json: Row[] = JSON.parse(runCli(['summary', each, '--json']).stdout);
    const r = runCli(['summary', each, '--csv']);
    expect(r.code).toBe(0);
    const rows = parseCsv(r.stdout);
    for (let k = 0; k < STATES; k++)
      rows.forEach((row, p) =>
        expect(Number(row[`states.${k}.string_width`])).toBe(json[p].states[k].observables.string_width),
      );
    const plain = runCli(['summary', ground, '--csv']).stdout.split('\n')[0];
    expect(plain).not.toMatch(/states\./);
  });

  it('--long lists the ground level rows, then each state rows under a state column', () => {
    const r = runCli(['summary', each, '--long', '--json']);
    expect(r.code).toBe(0);
    const rows: Row[] = JSON.parse(r.stdout);
    const point = rows.filter((x) => x.index === 0);
    expect(new Set(point.map((x) => x.state))).toEqual(new Set([null, 0, 1, 2]));
    const reference = denseStates(point[0]['exchange.strength']);
    for (let k = 0; k < STATES; k++) {
      const populations = point.filter((x) => x.state === k && x.observable === 'populations');
      expect(populations).toHaveLength(SITES * LEVELS);
      for (const x of populations)
        expect(Math.abs(x.value - reference[k].populations[x.site][x.level])).toBeLessThan(1e-5);
    }
    const csv = runCli(['summary', each, '--long', '--csv']).stdout.split('\n')[0].split(',');
    expect(csv).toContain('state');
    const text = runCli(['summary', each, '--long']).stdout.split('\n')[0];
    expect(text).toMatch(/\bstate\b/);
    // Without "each", the long outputs keep their columns.
    expect(runCli(['summary', ground, '--long', '--csv']).stdout.split('\n')[0].split(',')).not.toContain('state');
    expect(JSON.parse(runCli(['summary', ground, '--long', '--json']).stdout)[0]).not.toHaveProperty('state');
  });

  it('a wrong solve.observables stops solve with one line naming the key, exit code 2', () => {
    const r = runCli(['solve', path.join(dir, 'each.toml'), '--set', 'solve.observables=all', '--set', 'scan=null']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/^rungchain: solve\.observables: expected one of "ground", "each", got "all"/);
  });
});
