import { beforeAll, describe, expect, it } from 'vitest';
import { cpSync, mkdtempSync, readFileSync, truncateSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { RECORDS_FILE } from '../../src/runs/runFiles.js';
import { parseSpecText, validateSpec } from '../../src/spec/spec.js';
import { runCli } from '../support/cli.js';
import { densePinnedHamiltonian, denseSpectrum } from '../support/reference.js';

type Row = Record<string, any>;

const SITES = 4;
const LEVELS = 3;
const SPEC = `
[chain]
sites = ${SITES}
boundary = "periodic"
[levels]
count = ${LEVELS}
tunnelling = 1.0
detuning = [0, 0.2, -0.1]
[exchange]
strength = 1.0
weights = "rotor"
[solve]
states = 3
[[scan.axis]]
key = "chain.sites"
values = [${SITES}, 14]
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 2.0, 4.0]
`;

/** Minimal RFC 4180 reader: quoted fields may hold commas, quotes ("") and newlines. */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') {
        cell += '"';
        i++;
      } else if (c === '"') quoted = false;
      else cell += c;
    } else if (c === '"') quoted = true;
    else if (c === ',') {
      row.push(cell);
      cell = '';
    } else if (c === '\n') {
      row.push(cell);
      rows.push(row);
      row = [];
      cell = '';
    } else cell += c;
  }
  return rows;
}

let dir: string;
let run: string;

beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-summary-'));
  writeFileSync(path.join(dir, 'spec.toml'), SPEC);
  run = path.join(dir, 'run');
  // 14 sites x 3 levels cannot fit in 70 MB: those three points fail with the reason.
  const r = runCli([
    'scan',
    path.join(dir, 'spec.toml'),
    '--out',
    run,
    '--workers',
    '2',
    '--max-memory',
    '70MB',
    '--quiet',
  ]);
  // 3: the run holds failed points (on purpose, see above).
  expect(r.code).toBe(3);
});

describe('rungchain summary', () => {
  it('--json: one object per point with its parameters under their key paths, status, energies, gap and the output contract observables', () => {
    const r = runCli(['summary', run, '--json']);
    expect(r.code).toBe(0);
    const rows: Row[] = JSON.parse(r.stdout);
    expect(rows).toHaveLength(6);
    const done = rows.filter((x) => x.status === 'done');
    const failed = rows.filter((x) => x.status === 'failed');
    expect(done.map((x) => x['exchange.strength'])).toEqual([0.5, 2, 4]);
    expect(failed.map((x) => x['chain.sites'])).toEqual([14, 14, 14]);
    for (const x of failed) {
      expect(x.error).toMatch(/memory limit/);
      expect(x.energies).toBeNull();
    }
    for (const x of done) {
      expect(x['chain.sites']).toBe(SITES);
      expect(x.energies).toHaveLength(3);
      expect(x.gap).toBeCloseTo(x.energies[1] - x.energies[0], 14);
      for (const key of ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation'])
        expect(x.observables).toHaveProperty(key);
      expect(x.string_width).toBe(x.observables.string_width);

      // Independent: the spectrum of the plain dense Hamiltonian from ml-matrix's eigensolver.
      const raw = parseSpecText(SPEC, 'toml');
      delete raw.scan;
      (raw.exchange as Row).strength = x['exchange.strength'];
      const spectrum = denseSpectrum(densePinnedHamiltonian(validateSpec(raw)));
      x.energies.forEach((e: number, k: number) => expect(e).toBeCloseTo(spectrum[k], 9));

      // Probabilities of each site's level sum to one; the mean level is sum_n n P(n) (textbook).
      x.observables.populations.forEach((p: number[], i: number) => {
        expect(p.reduce((s, q) => s + q, 0)).toBeCloseTo(1, 12);
        expect(x.observables.level_mean[i]).toBeCloseTo(
          p.reduce((s, q, n) => s + n * q, 0),
          12,
        );
      });
    }
  });

  it('--csv: a tidy table with the same numbers as --json', () => {
    const json: Row[] = JSON.parse(runCli(['summary', run, '--json']).stdout);
    const r = runCli(['summary', run, '--csv']);
    expect(r.code).toBe(0);
    const [header, ...rows] = parseCsv(r.stdout);
    expect(header.slice(0, 4)).toEqual(['index', 'chain.sites', 'exchange.strength', 'status']);
    for (const name of ['E0', 'E1', 'E2', 'gap', 'string_width', 'iterations', 'seconds', 'error'])
      expect(header).toContain(name);
    expect(rows).toHaveLength(json.length);
    const col = (name: string) => header.indexOf(name);
    rows.forEach((row, k) => {
      expect(Number(row[col('index')])).toBe(json[k].index);
      expect(row[col('status')]).toBe(json[k].status);
      if (json[k].status === 'done') {
        expect(Number(row[col('E0')])).toBe(json[k].energies[0]);
        expect(Number(row[col('gap')])).toBe(json[k].gap);
        expect(Number(row[col('string_width')])).toBe(json[k].string_width);
        expect(row[col('error')]).toBe('');
      } else {
        expect(row[col('E0')]).toBe('');
        expect(row[col('error')]).toBe(json[k].error);
      }
    });
  });

  it('--long: per-site and per-level observables, one value per row', () => {
    const json: Row[] = JSON.parse(runCli(['summary', run, '--json']).stdout);
    const long: Row[] = JSON.parse(runCli(['summary', run, '--long', '--json']).stdout);
    const done = json.filter((x) => x.status === 'done');
    // L*N populations, L level means, L spreads, L(L-1)/2 pair separations, L(L+1)/2 level
    // correlations (diagonal included) and, on this ring, L structure factors (m = 0..L-1) and L
    // separation vectors per point.
    expect(long).toHaveLength(
      done.length * (SITES * LEVELS + 3 * SITES + (SITES * (SITES - 1)) / 2 + (SITES * (SITES + 1)) / 2 + SITES),
    );
    for (const x of done)
      expect(
        long.filter((r) => r.index === x.index && r.observable === 'level_structure_factor').map((r) => r.site),
      ).toEqual([0, 1, 2, 3]);
    for (const x of done) {
      const mine = long.filter((r) => r.index === x.index);
      for (const r of mine) {
        expect(r['exchange.strength']).toBe(x['exchange.strength']);
        const expected =
          r.observable === 'level_correlation_by_separation'
            ? x.observables.level_correlation_by_separation.find(
                (e: { separation: number[] }) => JSON.stringify(e.separation) === JSON.stringify(r.separation),
              ).value
            : r.observable === 'populations'
              ? x.observables.populations[r.site][r.level]
              : r.observable === 'pair_separation' || r.observable === 'level_correlation'
                ? x.observables[r.observable][r.site][r.other_site]
                : x.observables[r.observable][r.site];
        expect(r.value).toBe(expected);
      }
    }
    const csv = parseCsv(runCli(['summary', run, '--long', '--csv']).stdout);
    expect(csv[0]).toEqual([
      'index',
      'chain.sites',
      'exchange.strength',
      'observable',
      'site',
      'level',
      'other_site',
      'separation',
      'value',
    ]);
    expect(csv).toHaveLength(long.length + 1);
    expect(csv.filter((row) => row[3] === 'level_structure_factor')).toHaveLength(done.length * SITES);
    // The readable table: the same rows under a header line.
    const text = runCli(['summary', run, '--long']).stdout;
    expect(text.split('\n').filter((line) => /\blevel_structure_factor\b/.test(line))).toHaveLength(
      done.length * SITES,
    );
  });

  it('the readable table lists every point and the reasons of failures', () => {
    const r = runCli(['summary', run]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/point\s+chain\.sites\s+exchange\.strength\s+status\s+E0\s+gap/);
    expect(r.stdout).toMatch(/3 done, 3 failed, 0 pending of 6/);
    expect(r.stdout).toMatch(/point 3 failed: ResourceError: .*memory limit/);
  });
});

describe('rungchain status', () => {
  it('counts done, failed and pending, and notices an unfinished last record', () => {
    const copy = path.join(dir, 'copy');
    cpSync(run, copy, { recursive: true });
    const file = path.join(copy, RECORDS_FILE);
    truncateSync(file, readFileSync(file).length - 7);
    const r = runCli(['status', copy, '--json']);
    expect(r.code).toBe(0);
    const s = JSON.parse(r.stdout);
    expect(s.total).toBe(6);
    expect(s.done + s.failed).toBe(5);
    expect(s.pending).toBe(1);
    expect(s.torn_bytes).toBeGreaterThan(0);
    expect(s.running).toBe(false);
    const text = runCli(['status', copy]).stdout;
    expect(text).toMatch(/pending\s+1/);
    expect(text).toMatch(/unfinished record \(dropped on resume\)/);
    expect(text).toMatch(/resume with\s+\S*(rungchain|node \S*rungchain\.js) scan .*spec\.toml .*--out/);
  });

  it('summary refuses a run whose records are damaged in the middle, naming where', () => {
    const copy = path.join(dir, 'damaged');
    cpSync(run, copy, { recursive: true });
    const file = path.join(copy, RECORDS_FILE);
    const bytes = readFileSync(file);
    bytes[40] ^= 0x04; // inside the first record's payload
    writeFileSync(file, bytes);
    const r = runCli(['summary', copy, '--json']);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(
      /records\.msgpack is damaged in the middle: .* at byte 0, after record 0, with 5 intact records after/,
    );
  });
});

// H = 0 on 7 three-level sites: every one of the 3^7 = 2187 states is a ground state (elementary),
// beyond the 64 copies a Lanczos solve looks for. Summaries must say the level is incomplete
// rather than present the average over the copies found as the ground space's.
describe('summaries of points whose ground level was not found whole', () => {
  it('carry degeneracy and degeneracy_complete in JSON and CSV, and warn in the table', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-incomplete-'));
    const spec = path.join(dir, 'flat.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 7\n[levels]\ncount = 3\ntunnelling = 0.0\n[exchange]\nstrength = 0.0\n[solve]\nstates = 1\nsymmetries = "none"\n' +
        '[[scan.axis]]\nkey = "levels.detuning"\nvalues = [0.0, 0.5]\n',
    );
    const out = path.join(dir, 'run');
    expect(runCli(['scan', spec, '--out', out, '--quiet']).code).toBe(0);
    const json = JSON.parse(runCli(['summary', out, '--json']).stdout) as Row[];
    for (const row of json) {
      expect(row.degeneracy_complete).toBe(false);
      expect(row.degeneracy).toBeLessThan(2187);
    }
    const csvRows = parseCsv(runCli(['summary', out, '--csv']).stdout);
    const column = csvRows[0].indexOf('degeneracy_complete');
    expect(column).toBeGreaterThan(0);
    expect(csvRows.slice(1).map((r) => r[column])).toEqual(['false', 'false']);
    const text = runCli(['summary', out]).stdout;
    expect(text).toMatch(/done \(incomplete level\)/);
    expect(text).toMatch(/WARNING: 2 point\(s\) \(0, 1\) found not every copy of their ground level/);
  });
});
