// A disorder ensemble run as a scan through the built command line (issue 20): the realization axis
// innermost but one, records with the realization and the drawn values (those of the reference
// generator in tests/support/disorderReference.ts, written from docs/model.md), bit-identical records
// with 1 and 2 workers and with 1 and 3 shards merged (--no-warm-start makes records independent of
// scheduling, README "Parameter scans"), a resumed run that solves nothing twice, and `check`.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { readRun } from '../../src/runs/runFiles.js';
import { runCli } from '../support/cli.js';
import { realizeChain } from '../support/disorderReference.js';

type Rec = Record<string, any>;

const SPEC = `
[chain]
sites = 5
[levels]
count = 3
[exchange]
strength = 1.0
[solve]
states = 2
[disorder]
realizations = 4
seed = 11
filling = 0.8
tunnelling = { relative = 0.05 }
phase = { absolute = 0.2, correlation = "per_site" }
detuning = { absolute = 0.1 }
exchange = { relative = 0.1 }
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1.0, 1.5]
`;

function byIndex(dir: string): Map<number, Rec> {
  const map = new Map<number, Rec>();
  for (const r of readRun(dir).records as Rec[]) map.set(r.index, r);
  return map;
}

/** What must not depend on scheduling: everything but the clock, the worker and the warm start's cost. */
function stable(r: Rec): Rec {
  return {
    params: r.params,
    realization: r.realization,
    disorder: r.disorder,
    status: r.status,
    energies: r.result.energies,
    observables: r.result.observables,
    sectors: r.result.sectors,
  };
}

describe('a disorder ensemble as a scan', () => {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-disorder-'));
  const spec = path.join(dir, 'spec.toml');
  writeFileSync(spec, SPEC);
  const one = path.join(dir, 'one');
  const two = path.join(dir, 'two');

  it('check prints the realizations, the points in all and the largest dimension', () => {
    const r = runCli(['check', spec]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/grid: disorder\.realization \(4 values\) x exchange\.strength \(3 values\)/);
    expect(r.stdout).toMatch(/realizations {5}4 \(disorder\), 12 points in all, the largest dimension over them \d+/);
  });

  it('records carry the realization and the drawn values; 1 and 2 workers give bit-identical records', () => {
    expect(runCli(['scan', spec, '--out', one, '--quiet', '--no-warm-start', '--workers', '1']).code).toBe(0);
    expect(runCli(['scan', spec, '--out', two, '--quiet', '--no-warm-start', '--workers', '2']).code).toBe(0);
    const a = byIndex(one);
    const b = byIndex(two);
    expect(a.size).toBe(12);
    for (const [index, r] of a) {
      // Realizations innermost but one: point index = 3 r + k along exchange.strength.
      expect(r.params['disorder.realization']).toBe(Math.floor(index / 3));
      expect(r.realization).toBe(Math.floor(index / 3));
      expect(stable(b.get(index)!)).toEqual(stable(r));
      // The drawn values are the reference generator's (docs/model.md), bit for bit.
      const raw = {
        chain: { sites: 5 },
        levels: { count: 3 },
        exchange: { strength: r.params['exchange.strength'] },
      };
      const ref = realizeChain(
        raw,
        {
          realizations: 4,
          seed: 11,
          filling: 0.8,
          tunnelling: { relative: 0.05 },
          phase: { absolute: 0.2, correlation: 'per_site' },
          detuning: { absolute: 0.1 },
          exchange: { relative: 0.1 },
        },
        r.realization,
      );
      expect(r.disorder.tunnelling).toEqual(ref.model.siteTunnelling);
      expect(r.disorder.phase).toEqual(ref.model.sitePhase);
      expect(r.disorder.detuning).toEqual(ref.model.siteDetuning);
      expect(r.result.basis.sites).toBe(ref.kept.length);
      for (const [i, j, v] of r.disorder.exchange) expect(v).toBe(ref.model.exchangeValues![i][j]);
    }
  });

  it('summary --json averages over the realizations per value of the other axis; --realizations lists them', () => {
    const records = [...byIndex(one).values()];
    const groups = JSON.parse(runCli(['summary', one, '--json']).stdout) as Rec[];
    expect(groups.map((g) => g['exchange.strength'])).toEqual([0.5, 1.0, 1.5]);
    for (const g of groups) {
      const e0 = records
        .filter((r) => r.params['exchange.strength'] === g['exchange.strength'])
        .map((r) => r.result.energies[0] as number);
      // Sample mean and standard deviation (n - 1), standard error std / sqrt(n): common practice.
      const mean = e0.reduce((a, b) => a + b, 0) / e0.length;
      const std = Math.sqrt(e0.reduce((a, b) => a + (b - mean) ** 2, 0) / (e0.length - 1));
      expect(g.realizations).toEqual({ total: 4, done: 4, failed: 0, pending: 0 });
      expect(g.E0.mean).toBeCloseTo(mean, 12);
      expect(g.E0.std).toBeCloseTo(std, 12);
      expect(g.E0.stderr).toBeCloseTo(std / 2, 12);
      expect(g.string_width.n).toBe(4);
    }
    const each = JSON.parse(runCli(['summary', one, '--json', '--realizations']).stdout) as Rec[];
    expect(each).toHaveLength(12);
    expect(runCli(['summary', one]).stdout).toMatch(/E0 \(mean ± std\. error\)/);
  });

  it("the report draws means with error bars and averages each realization's own indicator", () => {
    const html = path.join(dir, 'report.html');
    expect(runCli(['report', one, '--out', html]).code).toBe(0);
    const page = readFileSync(html, 'utf8');
    expect(page).toContain('id="ensemble"');
    expect(page).toContain('id="ensemble-E0"');
    expect(page).toContain('id="ensemble-indicator-gap"');
    // The gap minimum's mean position: the mean of each realization's own minimum (from the
    // per-line analysis of `summary --analysis --json`), with the sample standard error.
    const analysis = JSON.parse(runCli(['summary', one, '--analysis', '--json']).stdout) as Rec;
    const minima = (analysis.lines as Rec[]).map(
      (l) => (l.indicators as Rec[]).find((i) => i.name === 'gap')!.peak.position as number,
    );
    const mean = minima.reduce((a, b) => a + b, 0) / minima.length;
    const row = /<td>E₁ − E₀<\/td><td>[^<]*<\/td><td>4 of 4<\/td><td>([-\d.e]+) ± /.exec(page);
    expect(row).not.toBeNull();
    expect(Number(row![1])).toBeCloseTo(mean, 4);
  });

  it('a second run resumes: nothing is solved twice', () => {
    const again = runCli(['scan', spec, '--out', one, '--no-warm-start', '--workers', '1']);
    expect(again.code).toBe(0);
    expect(readRun(one).records).toHaveLength(12);
  });

  it('3 shards merged give the same records as 1 worker', () => {
    const shards = [1, 2, 3].map((i) => path.join(dir, `shard-${i}`));
    shards.forEach((out, k) =>
      expect(
        runCli(['scan', spec, '--out', out, '--quiet', '--no-warm-start', '--workers', '1', '--shard', `${k + 1}/3`])
          .code,
      ).toBe(0),
    );
    const merged = path.join(dir, 'merged');
    expect(runCli(['merge', ...shards, '--out', merged]).code).toBe(0);
    const a = byIndex(one);
    const m = byIndex(merged);
    expect(m.size).toBe(12);
    for (const [index, r] of a) expect(stable(m.get(index)!)).toEqual(stable(r));
  });
});
