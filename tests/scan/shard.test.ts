import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { readRun } from '../../src/runs/runFiles.js';
import { expandScan, pointCost, sizeScan } from '../../src/scan/plan.js';
import { assignShards } from '../../src/scan/shard.js';
import { parseSpecText, validateSpec } from '../../src/spec/spec.js';
import { CLI, runCli } from '../support/cli.js';

type Rec = Record<string, any>;
const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-shard-'));

// Points of very different sizes (2 to 4 levels on 5 sites: 32 to 1024 states), so balancing by
// count and by cost differ.
const SPEC = `
[chain]
sites = 5
[levels]
count = 3
[exchange]
strength = 1.0
[solve]
states = 2
[[scan.axis]]
key = "levels.count"
values = [2, 3, 4]
[[scan.axis]]
key = "exchange.strength"
values = [0.5, 1.0, 1.5, 2.0]
`;

function byIndex(dir: string): Map<number, Rec> {
  const map = new Map<number, Rec>();
  for (const r of readRun(dir).records as Rec[]) map.set(r.index, r);
  return map;
}

function cli(args: string[], env: Record<string, string> = {}) {
  const r = spawnSync(process.execPath, [CLI, ...args], {
    encoding: 'utf8',
    env: { ...process.env, ...env },
    timeout: 120_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('shards', () => {
  const raw = parseSpecText(SPEC, 'toml');
  const plan = expandScan(raw, validateSpec(raw));
  const costs = sizeScan(plan, Infinity).plans.map(pointCost);

  it('every point lands in exactly one shard, for several n, deterministically', () => {
    for (const n of [1, 2, 3, 5, 12, 20]) {
      const shards = assignShards(plan, costs, n);
      expect(shards).toHaveLength(n);
      expect(shards.flat().sort((a, b) => a - b)).toEqual(plan.points.map((p) => p.index));
      expect(assignShards(plan, costs, n)).toEqual(shards);
    }
  });

  it('shards are balanced by estimated cost, not by count', () => {
    const n = 3;
    const shards = assignShards(plan, costs, n);
    const load = shards.map((s) => s.reduce((sum, i) => sum + costs[i], 0));
    const total = load.reduce((a, b) => a + b, 0);
    // Greedy longest-processing-time bound (Graham 1969): makespan <= 4/3 of the optimum, and the
    // optimum is at least max(total/n, largest unit); here the largest unit is a line piece.
    const largestPoint = Math.max(...costs);
    expect(Math.max(...load)).toBeLessThanOrEqual((4 / 3) * Math.max(total / n, 2 * largestPoint));
    // The expensive 4-level points are spread out, so counts differ between shards.
    const counts = shards.map((s) => s.length);
    expect(Math.max(...counts)).toBeGreaterThan(Math.min(...counts));
  });

  it('shard-and-merge equals an unsharded run of the same spec, record for record, for several n', () => {
    const dir = tmp();
    const spec = path.join(dir, 'spec.toml');
    writeFileSync(spec, SPEC);
    const whole = path.join(dir, 'whole');
    expect(runCli(['scan', spec, '--out', whole, '--quiet', '--no-warm-start', '--workers', '2']).code).toBe(0);
    const reference = byIndex(whole);
    for (const n of [2, 3, 5]) {
      const shardDirs: string[] = [];
      for (let i = 1; i <= n; i++) {
        const out = path.join(dir, `n${n}`, `shard-${i}`);
        shardDirs.push(out);
        // Half the shards take their index from the Slurm array variables, as inside an array task.
        const r =
          i % 2 === 0
            ? cli(['scan', spec, '--out', out, '--no-warm-start', '--workers', '1'], {
                SLURM_ARRAY_TASK_ID: String(i),
                SLURM_ARRAY_TASK_MIN: '1',
                SLURM_ARRAY_TASK_COUNT: String(n),
              })
            : cli(['scan', spec, '--out', out, '--no-warm-start', '--workers', '1', '--shard', `${i}/${n}`]);
        expect(r.code).toBe(0);
        expect(r.stderr).toMatch(new RegExp(`shard ${i} of ${n}`));
        expect(JSON.parse(readFileSync(path.join(out, 'manifest.json'), 'utf8')).identity).toBe(
          readRun(whole).manifest.identity,
        );
      }
      const merged = path.join(dir, `n${n}`, 'merged');
      const m = runCli(['merge', ...shardDirs, '--out', merged]);
      expect(m.code).toBe(0);
      expect(m.stdout).toMatch(/12 done, 0 failed, 0 missing of 12 \(12 records written now\)/);
      const got = byIndex(merged);
      expect(got.size).toBe(12);
      for (const [index, r] of reference) {
        const s = got.get(index)!;
        expect(s.params).toEqual(r.params);
        expect(s.status).toBe('done');
        expect(s.result.energies).toEqual(r.result.energies);
        expect(s.result.observables).toEqual(r.result.observables);
      }
      // Merging twice is harmless; summary reads the merged run like any other.
      expect(runCli(['merge', ...shardDirs, '--out', merged]).stdout).toMatch(/\(0 records written now\)/);
      expect(readRun(merged).records).toHaveLength(12);
      if (n !== 3) continue;
      // Times and the overlap with the previous point on the same worker depend on scheduling.
      const tidy = (rows: Rec[]) => rows.map(({ seconds: _s, overlap_previous: _o, ...rest }) => rest);
      expect(tidy(JSON.parse(runCli(['summary', merged, '--json']).stdout))).toEqual(
        tidy(JSON.parse(runCli(['summary', whole, '--json']).stdout)),
      );
    }
  });

  it('a shard cut short (a preempted task, mid-write) resumes like a local scan, and the merge is complete', () => {
    const dir = tmp();
    const spec = path.join(dir, 'spec.toml');
    writeFileSync(spec, SPEC);
    const shards = [1, 2].map((i) => path.join(dir, `shard-${i}`));
    shards.forEach((out, k) =>
      expect(runCli(['scan', spec, '--out', out, '--shard', `${k + 1}/2`, '--quiet', '--no-warm-start']).code).toBe(0),
    );
    const file = path.join(shards[0], 'records.msgpack');
    const full = readRun(shards[0]).records as Rec[];
    // Keep the first two records and half of the third, as a task killed while writing leaves it.
    const bytes = readFileSync(file);
    let end = 0;
    for (let k = 0; k < 2; k++) end += 12 + bytes.readUInt32LE(end + 4);
    writeFileSync(file, bytes.subarray(0, end + 20));
    const resumed = runCli(['scan', spec, '--out', shards[0], '--shard', '1/2', '--no-warm-start']);
    expect(resumed.code).toBe(0);
    expect(resumed.stderr).toMatch(/dropped a torn last record/);
    expect(resumed.stderr).toMatch(new RegExp(`resuming .*: 2 done, 0 failed, ${full.length - 2} to run`));
    const again = byIndex(shards[0]);
    for (const r of full) expect(again.get(r.index)!.result.energies).toEqual(r.result.energies);
    expect(runCli(['merge', ...shards, '--out', path.join(dir, 'merged')]).stdout).toMatch(
      /12 done, 0 failed, 0 missing of 12/,
    );
  });

  it('merge reports missing and duplicated points and refuses shards of another scan', () => {
    const dir = tmp();
    const spec = path.join(dir, 'spec.toml');
    writeFileSync(spec, SPEC);
    const s1 = path.join(dir, 's1');
    const s2 = path.join(dir, 's2');
    const all = path.join(dir, 'all');
    expect(runCli(['scan', spec, '--out', s1, '--shard', '1/2', '--quiet']).code).toBe(0);
    expect(runCli(['scan', spec, '--out', s2, '--shard', '2/2', '--quiet']).code).toBe(0);
    const missing = runCli(['merge', s1, '--out', path.join(dir, 'm1')]);
    expect(missing.code).toBe(3);
    expect(missing.stdout).toMatch(/missing points .*: \d+/);
    // A shard folder resumed as another shard is refused.
    expect(runCli(['scan', spec, '--out', s1, '--shard', '2/2']).stderr).toMatch(
      /holds shard 1\/2 of this scan, not shard 2\/2/,
    );
    // An unsharded run overlapping the shards: duplicates are reported, one record kept.
    expect(runCli(['scan', spec, '--out', all, '--quiet']).code).toBe(0);
    const dup = runCli(['merge', s1, s2, all, '--out', path.join(dir, 'm2')]);
    expect(dup.code).toBe(0);
    expect(dup.stdout).toMatch(/more than one folder \(one record kept\): 0, 1, 2/);
    expect(readRun(path.join(dir, 'm2')).records).toHaveLength(12);
    // Another scan (a different override) cannot be merged in.
    const other = path.join(dir, 'other');
    expect(
      runCli(['scan', spec, '--set', 'exchange.range=dipolar', '--out', other, '--shard', '2/2', '--quiet']).code,
    ).toBe(0);
    const refused = runCli(['merge', s1, other, '--out', path.join(dir, 'm3')]);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/is a different scan/);
  });

  it('the batch script is a job array with memory and time from the estimates and the options given', () => {
    const dir = tmp();
    const spec = path.join(dir, 'spec.toml');
    writeFileSync(spec, SPEC);
    const r = runCli([
      'slurm',
      spec,
      '--shards',
      '4',
      '--cpus',
      '2',
      '--partition',
      'short',
      '--account',
      'lab42',
      '--run-dir',
      path.join(dir, 'run'),
      '--write',
      '-',
    ]);
    expect(r.code).toBe(0);
    const script = r.stdout;
    expect(script.startsWith('#!/bin/bash\n')).toBe(true);
    expect(script).toMatch(/^#SBATCH --array=1-4$/m);
    expect(script).toMatch(/^#SBATCH --cpus-per-task=2$/m);
    expect(script).toMatch(/^#SBATCH --partition=short$/m);
    expect(script).toMatch(/^#SBATCH --account=lab42$/m);
    const mem = Number(/^#SBATCH --mem=(\d+)M$/m.exec(script)![1]);
    // At least two of the largest point's estimate (two workers solve at once), minus one shared runtime.
    const largest = Math.max(...sizeScan(plan, Infinity).plans.map((p) => p.memory.totalBytes));
    expect(mem * 2 ** 20).toBeGreaterThan(largest);
    expect(script).toMatch(/^#SBATCH --time=\d\d:\d\d:00$/m);
    expect(script).toMatch(
      /scan \S+spec\.toml --out "\S+\/run\/shard-\$\{SLURM_ARRAY_TASK_ID\}" --workers "\$\{SLURM_CPUS_PER_TASK:-1\}"/,
    );
  });
});
