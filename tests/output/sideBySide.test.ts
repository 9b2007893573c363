import { beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { runCli } from '../support/cli.js';

// Three kinds of particles on the same chain, open and periodic, through `scan` and then
// `summary --by particles.kind`. One level, no interactions: every energy is a textbook sum.
const L = 8;
const NP = 4;
const T = 1.1;
const SPEC = `
[chain]
sites = ${L}
[levels]
count = 1
[particles]
kind = "fermion"
number = ${NP}
hopping = ${T}
[solve]
states = 2
[[scan.axis]]
key = "chain.boundary"
values = ["open", "periodic"]
[[scan.axis]]
key = "particles.kind"
values = ["hardcore", "fermion", "boson"]
`;

const lowest = (energies: number[], n: number) =>
  [...energies]
    .sort((a, b) => a - b)
    .slice(0, n)
    .reduce((a, b) => a + b, 0);
// Open chain: orbitals -2t cos(pi k/(L+1)), k = 1..L; ring: -2t cos(2 pi (k + shift)/L) (textbook tight binding).
const open = Array.from({ length: L }, (_, k) => -2 * T * Math.cos((Math.PI * (k + 1)) / (L + 1)));
const ring = (shift: number) => Array.from({ length: L }, (_, k) => -2 * T * Math.cos((2 * Math.PI * (k + shift)) / L));
const expected: Record<string, Record<string, number>> = {
  // Jordan-Wigner: hard-core bosons = fermions on an open chain; on a ring with an even particle
  // number the fermions see antiperiodic boundaries (Lieb, Schultz, Mattis, Ann. Phys. 16, 407 (1961)).
  // Free bosons all occupy the lowest orbital (ideal Bose gas).
  open: { hardcore: lowest(open, NP), fermion: lowest(open, NP), boson: NP * open[0] },
  periodic: { hardcore: lowest(ring(0.5), NP), fermion: lowest(ring(0), NP), boson: NP * -2 * T },
};

let run: string;

beforeAll(() => {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-by-kind-'));
  writeFileSync(path.join(dir, 'kinds.toml'), SPEC);
  run = path.join(dir, 'run');
  const r = runCli(['scan', path.join(dir, 'kinds.toml'), '--out', run, '--workers', '1', '--quiet']);
  expect(r.code).toBe(0);
});

describe('summary --by particles.kind', () => {
  it('--json: one row per boundary, an E0 column per kind, each the textbook energy', () => {
    const r = runCli(['summary', run, '--by', 'particles.kind', '--json']);
    expect(r.code).toBe(0);
    const rows = JSON.parse(r.stdout) as Record<string, any>[];
    expect(rows.map((x) => x['chain.boundary'])).toEqual(['open', 'periodic']);
    for (const row of rows) {
      for (const kind of ['hardcore', 'fermion', 'boson']) {
        expect(row[`E0[${kind}]`]).toBeCloseTo(expected[row['chain.boundary']][kind], 10);
        expect(row).toHaveProperty(`gap[${kind}]`);
        expect(row).toHaveProperty(`string_width[${kind}]`);
      }
      // Free bosons condense completely: condensate fraction 1 (Penrose and Onsager, Phys. Rev. 104, 576 (1956)).
      expect(row['condensate_fraction[boson]']).toBeCloseTo(1, 9);
    }
  });

  it('--csv with the shorthand --by kind: the other axes, then quantity[kind] columns', () => {
    const r = runCli(['summary', run, '--by', 'kind', '--csv']);
    expect(r.code).toBe(0);
    const [header, ...lines] = r.stdout
      .trim()
      .split('\n')
      .map((l) => l.split(','));
    expect(header.slice(0, 4)).toEqual(['chain.boundary', 'E0[hardcore]', 'E0[fermion]', 'E0[boson]']);
    expect(lines).toHaveLength(2);
    const periodic = lines.find((l) => l[0] === 'periodic')!;
    expect(Number(periodic[1])).toBeCloseTo(expected.periodic.hardcore, 10);
    expect(Number(periodic[2])).toBeCloseTo(expected.periodic.fermion, 10);
  });

  it('--long carries the per-site density and pairs on a site of each kind', () => {
    const r = runCli(['summary', run, '--long', '--json']);
    expect(r.code).toBe(0);
    const rows = (JSON.parse(r.stdout) as Record<string, any>[]).filter((x) => x['chain.boundary'] === 'periodic');
    for (const kind of ['hardcore', 'fermion', 'boson']) {
      const density = rows.filter((x) => x['particles.kind'] === kind && x.observable === 'density');
      const pairs = rows.filter((x) => x['particles.kind'] === kind && x.observable === 'double_occupancy');
      expect(density.map((x) => x.site)).toEqual(Array.from({ length: L }, (_, i) => i));
      // A ring's ground space is translation invariant: the density is uniform, Np/L (common practice).
      for (const x of density) expect(x.value).toBeCloseTo(NP / L, 10);
      // Hard-core bosons never share a site, nor do fermions with one level (Pauli); free bosons, each
      // on a site with probability 1/L, share site i in C(Np,2)/L^2 pairs on average (multinomial counting).
      const expectedPairs = kind === 'boson' ? (NP * (NP - 1)) / 2 / (L * L) : 0;
      expect(pairs).toHaveLength(L);
      for (const x of pairs) expect(x.value).toBeCloseTo(expectedPairs, 10);
    }
  });

  it('readable table, and an axis the scan does not have is one error line', () => {
    const ok = runCli(['summary', run, '--by', 'kind']);
    expect(ok.code).toBe(0);
    expect(ok.stdout).toMatch(/E0\[hardcore\]\s+E0\[fermion\]\s+E0\[boson\]/);
    const bad = runCli(['summary', run, '--by', 'levels.count']);
    expect(bad.code).toBe(2);
    expect(bad.stderr.trim().split('\n')).toHaveLength(1);
    expect(bad.stderr).toMatch(/no axis levels\.count/);
  });
});
