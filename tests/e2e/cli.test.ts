import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawnSync } from 'node:child_process';
import { CLI, ROOT, runCli } from '../support/cli.js';

const fixture = 'tests/fixtures/xx-chain.toml';

describe('rungchain command line', () => {
  it('solve --json prints exactly one JSON object with the output contract', () => {
    const r = runCli(['solve', fixture, '--json']);
    expect(r.code).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines).toHaveLength(1);
    const out = JSON.parse(lines[0]);
    expect(out.energies).toHaveLength(2);
    for (const key of ['populations', 'level_mean', 'spread', 'string_width', 'pair_separation']) {
      expect(out.observables).toHaveProperty(key);
    }
    expect(out.basis.dimension).toBe(256);
    expect(out.solver.iterations).toBeGreaterThan(0);
    expect(out.solver.residuals).toHaveLength(2);
    // XX chain of 8 sites, free fermions (Lieb, Schultz, Mattis 1961)
    let e0 = 0;
    for (let k = 1; k <= 8; k++) e0 += Math.min(0, 2 * Math.cos((k * Math.PI) / 9));
    expect(out.energies[0]).toBeCloseTo(e0, 10);
  });

  it('--set overrides a key and the same spec reads from JSON', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-'));
    const json = path.join(dir, 'spec.json');
    writeFileSync(
      json,
      JSON.stringify({ chain: { sites: 8 }, levels: { count: 2, tunnelling: 0 }, exchange: { strength: 1 } }),
    );
    const a = JSON.parse(runCli(['solve', json, '--json', '--set', 'exchange.strength=2']).stdout);
    const b = JSON.parse(runCli(['solve', fixture, '--json']).stdout);
    expect(a.energies[0]).toBeCloseTo(2 * b.energies[0], 10);
  });

  it('the readable table names the energies and the populations', () => {
    const r = runCli(['solve', fixture]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/energy/);
    expect(r.stdout).toMatch(/P\(n=1\)/);
  });

  it('bad input: one line naming the key, exit code 2, no stack trace', () => {
    const r = runCli(['solve', fixture, '--set', 'levels.tunelling=1']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/levels\.tunelling/);
    expect(r.stderr).not.toMatch(/\bat .*\.js:\d+/);
    const missing = runCli(['solve', 'no/such/spec.toml']);
    expect(missing.code).toBe(2);
    expect(missing.stderr.trim().split('\n')).toHaveLength(1);
  });

  it('a [lattice] spec: check prints the geometry, solve runs, a bad lattice key is one line naming it', () => {
    const square = 'tests/fixtures/tilted-square.toml';
    const c = runCli(['check', square]);
    expect(c.code).toBe(0);
    expect(c.stdout).toMatch(/geometry: square, 6 sites, field \[0\.707107, 0, 0\.707107\]/);
    expect(c.stdout).toMatch(/^5 +2 +1 +0$/m);
    // 15 pairs: along x at 1 and 2 (factor 1 - 3/2), along y at 1 (factor 1), diagonals at sqrt 2 and sqrt 5.
    expect(c.stdout).toMatch(/exchange V_ij: 15 coupled pairs, 5 distinct values/);
    const r = runCli(['solve', square, '--json']);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.basis.dimension).toBe(64);
    expect(out.observables.level_structure_factor).toBeNull();
    const bad = runCli(['check', square, '--set', 'lattice.size=[3]']);
    expect(bad.code).toBe(2);
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
    expect(bad.stderr).toMatch(/^rungchain: lattice\.size: /);
  });

  it('check sizes the problem, and solve refuses what exceeds the memory limit', () => {
    const c = runCli(['check', fixture, '--set', 'chain.sites=20', '--set', 'solve.symmetries="none"']);
    expect(c.code).toBe(0);
    expect(c.stdout).toMatch(/basis dimension\s+1048576/);
    expect(c.stdout).toMatch(/on the fly/);
    // with symmetries (the default) check names them: an open XX chain has its mirror and a conserved total level
    const sectors = runCli(['check', fixture, '--set', 'chain.sites=20']);
    expect(sectors.stdout).toMatch(/symmetries\s+reflection, charge/);
    const refused = runCli(['solve', fixture, '--set', 'chain.sites=20', '--max-memory', '20MB']);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/estimated .*MiB/);
  });

  it.skipIf(os.availableParallelism() < 2)(
    'check says how many sectors run at once, and fewer under a tight memory limit',
    () => {
      const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-cli-'));
      const spec = path.join(dir, 'ring.toml');
      writeFileSync(
        spec,
        '[chain]\nsites = 10\nboundary = "periodic"\n[levels]\ncount = 4\ntunnelling = 1.0\n[exchange]\nstrength = 1.5\n',
      );
      const roomy = runCli(['check', spec]);
      expect(roomy.stdout).toMatch(/solved sector by sector, 2 at a time\)/);
      const estimate = (out: string) => Number(/memory estimate\s+([\d.]+) MiB/.exec(out)![1]);
      // Just under the estimate for two at a time: one at a time still fits.
      const tight = runCli(['check', spec, '--max-memory', `${Math.floor(estimate(roomy.stdout) - 1)}MiB`]);
      expect(tight.stdout).toMatch(/solved sector by sector\)/);
      expect(estimate(tight.stdout)).toBeLessThan(estimate(roomy.stdout));
    },
  );

  it('demo runs and shows the string width table', () => {
    const r = runCli(['demo'], { timeout: 60_000 });
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/width N=5/);
  });

  it('the demo suggests commands that run from where the user stands (no rungchain on PATH after npm install)', () => {
    const env: NodeJS.ProcessEnv = { ...process.env, PATH: path.dirname(process.execPath) };
    delete env.npm_command;
    const r = spawnSync(process.execPath, [CLI, 'demo'], { cwd: ROOT, env, encoding: 'utf8', timeout: 60_000 });
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('run `node dist/bin/rungchain.js solve SPEC`');
    expect(r.stdout).not.toMatch(/`rungchain solve/);
  });
});

describe('a run folder that belongs to another run', () => {
  const scanSpec = (dir: string, name: string, strengths: number[]) => {
    const file = path.join(dir, name);
    writeFileSync(
      file,
      [
        '[chain]\nsites = 4\n[levels]\ncount = 2\ntunnelling = 1\n[exchange]\nstrength = 1.0',
        `[[scan.axis]]\nkey = "exchange.strength"\nvalues = [${strengths.join(', ')}]`,
      ].join('\n'),
    );
    return file;
  };

  it('scan and merge say which flag chooses another folder', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-'));
    const first = scanSpec(dir, 'first.toml', [1, 2]);
    const second = scanSpec(dir, 'second.toml', [3, 4]);
    const out = path.join(dir, 'run');
    expect(runCli(['scan', first, '--out', out, '--quiet']).code).toBe(0);

    const other = runCli(['scan', second, '--out', out, '--quiet']);
    expect(other.code).toBe(2);
    expect(other.stderr).toContain(`choose another --out, or delete ${out} to start over`);

    const shard = runCli(['scan', first, '--out', out, '--shard', '1/2', '--quiet']);
    expect(shard.code).toBe(2);
    expect(shard.stderr).toMatch(/holds the whole scan of this scan, not shard 1\/2; choose another --out\n$/);

    const merge = runCli(['merge', out, '--out', out]);
    expect(merge.code).toBe(2);
    expect(merge.stderr).toBe(`rungchain: merge: --out ${out} is one of the shard folders\n`);
  });
});

describe('the memory limit is named as the command line sets it', () => {
  it('solve and a scan point over the limit say to raise it with --max-memory', () => {
    const refused = runCli(['solve', fixture, '--set', 'chain.sites=20', '--max-memory', '20MB']);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/raise it with --max-memory, or use symmetry sectors/);

    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-'));
    const spec = path.join(dir, 'scan.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 20\n[levels]\ncount = 2\ntunnelling = 0\n[exchange]\nstrength = 1.0\n[solve]\nsymmetries = "none"\n' +
        '[[scan.axis]]\nkey = "exchange.strength"\nvalues = [1]\n',
    );
    const out = path.join(dir, 'run');
    const scan = runCli(['scan', spec, '--out', out, '--max-memory', '20MB', '--quiet']);
    expect(scan.code).toBe(3);
    const status = runCli(['summary', out, '--json']);
    expect(status.stdout).toMatch(/raise it with --max-memory, or use symmetry sectors/);
  });
});
