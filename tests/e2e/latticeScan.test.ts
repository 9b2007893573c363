// Scans over [lattice] keys through the built command line (issue 19): a list-valued axis
// (lattice.field) and lattice.spacing, the run records holding the values, summary and report
// printing them readably, --set on lattice keys, a bad lattice value refused before any point runs.
//
// Two molecules with two levels and no tunnelling: exchange V_12 splits |01>, |10> into +-V_12, so
// the spectrum spans 2 |V (1 - 3 cos^2 theta)| / r^3 (textbook dipole-dipole interaction, e.g.
// Jackson, Classical Electrodynamics, eq. 4.28; the splitting is common practice).
import { describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { runCli } from '../support/cli.js';

const V = 1.3;
const SPEC = `
[lattice]
shape = "custom"
positions = [[0, 0], [1, 0]]

[levels]
count = 2
tunnelling = 0

[exchange]
strength = ${V}

[solve]
states = 4
symmetries = "none"

[[scan.axis]]
key = "lattice.field"
values = [[0, 0, 1], [1, 0, 0], [1, 1, 0]]

[[scan.axis]]
key = "lattice.spacing"
values = [1, [1.5, 1, 1]]
`;

/** cos^2 of the angle between the x axis (the pair's separation) and the field. */
const cos2 = (field: number[]) => field[0] ** 2 / (field[0] ** 2 + field[1] ** 2 + field[2] ** 2);

describe('scanning lattice keys', () => {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-lattice-scan-'));
  const spec = path.join(dir, 'pair.toml');
  writeFileSync(spec, SPEC);
  const run = path.join(dir, 'run');

  it('runs every point; the records hold the list values; energies follow 2 V |1 - 3 cos^2 theta| / r^3', () => {
    const r = runCli(['scan', spec, '--out', run]);
    expect(r.code, r.stderr).toBe(0);
    const points = JSON.parse(runCli(['summary', run, '--json']).stdout) as Record<string, any>[];
    expect(points).toHaveLength(6);
    const seen = points.map((p) => JSON.stringify([p['lattice.field'], p['lattice.spacing']]));
    expect(new Set(seen)).toEqual(
      new Set(
        [
          [0, 0, 1],
          [1, 0, 0],
          [1, 1, 0],
        ].flatMap((f) => [JSON.stringify([f, 1]), JSON.stringify([f, [1.5, 1, 1]])]),
      ),
    );
    for (const p of points) {
      expect(p.status).toBe('done');
      const field = p['lattice.field'] as number[];
      const spacing = p['lattice.spacing'];
      const r3 = (Array.isArray(spacing) ? spacing[0] : spacing) ** 3;
      const splitting = p.energies[3] - p.energies[0];
      expect(Math.abs(splitting - (2 * V * Math.abs(1 - 3 * cos2(field))) / r3)).toBeLessThan(1e-12);
    }
  });

  it('summary and report write the list values readably; summary --csv keeps them as JSON', () => {
    const text = runCli(['summary', run]).stdout;
    expect(text).toMatch(/lattice\.field\s+lattice\.spacing/);
    expect(text).toContain('[1,1,0]');
    expect(text).toContain('[1.5,1,1]');
    const csv = runCli(['summary', run, '--csv']).stdout;
    expect(csv).toContain('"[1,0,0]","[1.5,1,1]"');
    const html = path.join(dir, 'report.html');
    const rep = runCli(['report', run, '--out', html]);
    expect(rep.code, rep.stderr).toBe(0);
    const page = readFileSync(html, 'utf8');
    // The table of values: one cell per point with the field as a bracketed list.
    expect(page).toContain('<td>[1, 1, 0]</td>');
    expect(page).toContain('<td>[1.5, 1, 1]</td>');
  });

  it('--set on lattice keys, and a bad lattice value in a scan is one line naming the key (exit 2)', () => {
    const one = JSON.parse(
      runCli(['solve', spec, '--json', '--set', 'lattice.field=[1,0,0]', '--set', 'lattice.spacing=2']).stdout,
    );
    expect(Math.abs(one.energies[3] - one.energies[0] - (2 * V * 2) / 8)).toBeLessThan(1e-12);
    // The readable solve names the arrangement, not a chain.
    expect(runCli(['solve', spec]).stdout).toMatch(/^pinned custom array: 2 sites x 2 levels/);
    const bad = path.join(dir, 'bad.toml');
    writeFileSync(bad, SPEC.replace('[1, 1, 0]]', '[0, 0, 0]]'));
    const r = runCli(['scan', bad, '--out', path.join(dir, 'bad-run')]);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/^rungchain: lattice\.field: .*\[0, 0, 0\]/);
  });
});
