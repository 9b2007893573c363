// Saved states read back by a .npy reader written here from the format's definition (NumPy's NEP 1
// and the numpy.lib.format documentation: magic "\x93NUMPY", version 1.0, little-endian uint16
// header length, a Python dict literal padded so the data starts at a multiple of 64, C-order data),
// checked against dense Hamiltonians built from docs/model.md by tests/support.

import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { solvePoint } from '../../src/point/solvePoint.js';
import { writeStatesFile } from '../../src/point/stateFile.js';
import { buildModel } from '../../src/model/model.js';
import { validateSpec, type Spec } from '../../src/spec/spec.js';
import { densePinnedHamiltonian, realEmbedding } from '../support/reference.js';
import { clean, randomPinnedSpec } from '../support/random.js';
import { denseFockHamiltonian, key, randomItinerantSpec } from '../support/fockReference.js';

const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'rungchain-states-'));
afterAll(() => fs.rmSync(folder, { recursive: true, force: true }));

interface NpyArray {
  descr: string;
  shape: number[];
  dataOffset: number;
  /** Rows as real and imaginary parts (imaginary zero for '<f8'). */
  rows: { re: number[]; im: number[] }[];
}

/** A minimal reader of the format: enough for 2-D '<f8' and '<c16' arrays in C order. */
function readNpy(file: string): NpyArray {
  const bytes = fs.readFileSync(file);
  expect([...bytes.subarray(0, 6)]).toEqual([0x93, ...Buffer.from('NUMPY')]);
  expect([bytes[6], bytes[7]]).toEqual([1, 0]);
  const headerLength = bytes.readUInt16LE(8);
  const dataOffset = 10 + headerLength;
  expect(dataOffset % 64).toBe(0);
  const header = bytes.subarray(10, dataOffset).toString('latin1');
  expect(header.endsWith('\n')).toBe(true);
  const match = /^\{'descr': '(<f8|<c16)', 'fortran_order': False, 'shape': \((\d+), (\d+)\), \} *\n$/.exec(header);
  expect(match).not.toBeNull();
  const descr = match![1];
  const shape = [Number(match![2]), Number(match![3])];
  const complex = descr === '<c16';
  const entryBytes = complex ? 16 : 8;
  expect(bytes.length).toBe(dataOffset + shape[0] * shape[1] * entryBytes);
  const rows = Array.from({ length: shape[0] }, (_, r) => {
    const re: number[] = [];
    const im: number[] = [];
    for (let c = 0; c < shape[1]; c++) {
      const at = dataOffset + (r * shape[1] + c) * entryBytes;
      re.push(bytes.readDoubleLE(at));
      im.push(complex ? bytes.readDoubleLE(at + 8) : 0);
    }
    return { re, im };
  });
  return { descr, shape, dataOffset, rows };
}

let counter = 0;
function saveAndRead(spec: Spec, which: 'ground' | 'all') {
  const solved = solvePoint(spec, { keepStates: which });
  const file = path.join(folder, `states${counter++}.npy`);
  writeStatesFile(file, solved.kept!, solved.record, buildModel(spec));
  const sidecar = JSON.parse(fs.readFileSync(`${file}.json`, 'utf8'));
  return { record: solved.record, array: readNpy(file), sidecar };
}

/** |H v - E v| with H = re + i im dense, v = a + i b. */
function residual(h: { re: Matrix; im: Matrix }, v: { re: number[]; im: number[] }, energy: number): number {
  const n = v.re.length;
  let sum = 0;
  for (let r = 0; r < n; r++) {
    let xr = -energy * v.re[r];
    let xi = -energy * v.im[r];
    for (let c = 0; c < n; c++) {
      const hr = h.re.get(r, c);
      const hi = h.im.get(r, c);
      xr += hr * v.re[c] - hi * v.im[c];
      xi += hr * v.im[c] + hi * v.re[c];
    }
    sum += xr * xr + xi * xi;
  }
  return Math.sqrt(sum);
}

function norm(v: { re: number[]; im: number[] }): number {
  return Math.sqrt(v.re.reduce((s, x, k) => s + x * x + v.im[k] * v.im[k], 0));
}

/** |<u|v>| of two complex vectors. */
function overlap(u: { re: number[]; im: number[] }, v: { re: number[]; im: number[] }): number {
  let re = 0;
  let im = 0;
  for (let k = 0; k < u.re.length; k++) {
    re += u.re[k] * v.re[k] + u.im[k] * v.im[k];
    im += u.re[k] * v.im[k] - u.im[k] * v.re[k];
  }
  return Math.hypot(re, im);
}

/**
 * The dense eigenvector of H for its k-th lowest eigenvalue, via ml-matrix on the real embedding
 * [[A, -B], [B, A]] (Horn and Johnson): an eigenvector (u; w) gives u + i w. Non-degenerate levels only.
 */
function denseEigenvectors(h: { dim: number; re: Matrix; im: Matrix }): {
  values: number[];
  vectors: { re: number[]; im: number[] }[];
} {
  const big = realEmbedding(h);
  const evd = new EigenvalueDecomposition(big, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k]).sort((a, b) => a[0] - b[0]);
  // Each level appears twice in the embedding; one of its two vectors is enough up to phase.
  const picked = order.filter((_, k) => k % 2 === 0);
  return {
    values: picked.map((o) => o[0]),
    vectors: picked.map((o) => {
      const col = evd.eigenvectorMatrix.getColumn(o[1]);
      const v = { re: col.slice(0, h.dim), im: col.slice(h.dim) };
      const n = norm(v);
      return { re: v.re.map((x) => x / n), im: v.im.map((x) => x / n) };
    }),
  };
}

describe('solve --save-states: pinned chains against ml-matrix dense eigenvectors', () => {
  // A random complex chain (phases on every link) with a non-degenerate low spectrum, checked below.
  it.each(['none', 'auto'] as const)('every solved state of a random chain, symmetries %s', (symmetries) => {
    const raw = clean(randomPinnedSpec(7, 3, 3));
    // Open ends: a ring's translations would pair momenta +-k into degenerate levels.
    raw.chain.boundary = 'open';
    raw.solve = { states: 4, tolerance: 1e-11, symmetries };
    const spec = validateSpec(raw);
    const h = densePinnedHamiltonian(spec);
    const dense = denseEigenvectors(h);
    for (let k = 0; k < 4; k++) expect(dense.values[k + 1] - dense.values[k]).toBeGreaterThan(1e-4);
    const { array, sidecar } = saveAndRead(spec, 'all');
    expect(array.shape).toEqual([4, 27]);
    expect(sidecar.shape).toEqual(array.shape);
    expect(sidecar.dtype).toBe(array.descr === '<c16' ? 'complex128' : 'float64');
    array.rows.forEach((row, k) => {
      expect(sidecar.energies[k]).toBeCloseTo(dense.values[k], 9);
      expect(norm(row)).toBeCloseTo(1, 12);
      expect(residual(h, row, sidecar.energies[k])).toBeLessThan(1e-8);
      expect(overlap(dense.vectors[k], row)).toBeCloseTo(1, 9);
    });
  });

  // A real ring with translation, reflection and level flip: a sector solve expands its states.
  const ring = {
    chain: { sites: 4, boundary: 'periodic' },
    levels: { count: 3, tunnelling: 0.7, detuning: [0.1, -0.2, 0.1] },
    exchange: { strength: 1.3 },
  };
  it.each(['none', 'auto'] as const)('a symmetric ring, every solved state, symmetries %s', (symmetries) => {
    const spec = validateSpec({ ...ring, solve: { states: 4, tolerance: 1e-11, symmetries } });
    const h = densePinnedHamiltonian(spec);
    const dense = denseEigenvectors(h);
    const { array, sidecar, record } = saveAndRead(spec, 'all');
    expect(array.shape[1]).toBe(81);
    if (symmetries === 'auto') {
      expect(record.solver.symmetries?.length ?? 0).toBeGreaterThan(0);
      expect(sidecar.sectors).toHaveLength(array.shape[0]);
    } else expect(sidecar.sectors).toBeNull();
    array.rows.forEach((row, k) => {
      expect(norm(row)).toBeCloseTo(1, 12);
      expect(residual(h, row, sidecar.energies[k])).toBeLessThan(1e-8);
      expect(sidecar.energies[k]).toBeCloseTo(dense.values[k], 9);
    });
    // Rows of one level (a k, -k pair) span it: they are orthonormal.
    for (let a = 0; a < array.shape[0]; a++)
      for (let b = a + 1; b < array.shape[0]; b++) expect(overlap(array.rows[a], array.rows[b])).toBeLessThan(1e-9);
  });

  // An XX ring of three 2-level molecules, no tunnelling: one excitation hops with amplitude V, so
  // E(k) = 2 V cos(2 pi m / 3), the two m = +-1 states at -V; the two-excitation sector mirrors it
  // (particle-hole), so the ground level -V has four copies (Lieb, Schultz and Mattis 1961).
  it.each(['none', 'auto'] as const)('a degenerate ground level is saved whole, symmetries %s', (symmetries) => {
    const V = 0.8;
    const spec = validateSpec({
      chain: { sites: 3, boundary: 'periodic' },
      levels: { count: 2, tunnelling: 0 },
      exchange: { strength: V, range: 'nearest' },
      solve: { states: 2, tolerance: 1e-11, symmetries },
    });
    const h = densePinnedHamiltonian(spec);
    // Every solved state: the two asked for and the ground level's two further copies.
    const all = saveAndRead(spec, 'all');
    expect(all.array.shape).toEqual([4, 8]);
    all.array.rows.forEach((row) => expect(residual(h, row, -V)).toBeLessThan(1e-8));
    const { array, sidecar, record } = saveAndRead(spec, 'ground');
    expect(record.energies[0]).toBeCloseTo(-V, 10);
    expect(record.solver.degeneracy).toBe(4);
    expect(array.shape).toEqual([4, 8]);
    expect(sidecar.degeneracy).toBe(4);
    array.rows.forEach((row) => {
      expect(norm(row)).toBeCloseTo(1, 12);
      expect(residual(h, row, -V)).toBeLessThan(1e-8);
    });
    for (let a = 0; a < 4; a++)
      for (let b = a + 1; b < 4; b++) expect(overlap(array.rows[a], array.rows[b])).toBeLessThan(1e-9);
  });
});

describe('solve --save-states: itinerant kinds, columns in the order the sidecar states', () => {
  /** Occupations over modes i*N + n of every column, built from the sidecar's words: tuples of local states, site 0 most significant. */
  function columnsFromSidecar(sidecar: { sites: number; particles: number; basis: { local_states: number[][] } }) {
    const local = sidecar.basis.local_states;
    const count = (s: number) => local[s].reduce((a, b) => a + b, 0);
    const out: number[][] = [];
    const walk = (site: number, left: number, occ: number[]): void => {
      if (site === sidecar.sites) {
        if (left === 0) out.push(occ);
        return;
      }
      for (let s = 0; s < local.length; s++)
        if (count(s) <= left) walk(site + 1, left - count(s), [...occ, ...local[s]]);
    };
    walk(0, sidecar.particles, []);
    return out;
  }

  it.each([
    ['hardcore', 'none', 11],
    ['boson', 'auto', 12],
    ['fermion', 'none', 13],
    ['fermion', 'auto', 14],
  ] as const)('%s, symmetries %s: rows are eigenvectors of the dense Fock Hamiltonian', (kind, symmetries, seed) => {
    const raw = randomItinerantSpec(seed, kind, 3, 2, 2, { complex: true, maxPerSite: 2 });
    raw.solve = { states: 3, tolerance: 1e-11, symmetries };
    const spec = validateSpec(raw);
    const ref = denseFockHamiltonian(spec);
    const { array, sidecar } = saveAndRead(spec, 'all');
    expect(sidecar.kind).toBe(kind);
    const columns = columnsFromSidecar(sidecar);
    expect(columns).toHaveLength(ref.dim);
    expect(array.shape).toEqual([3, ref.dim]);
    // The reference's own order, by the occupations each column names.
    const place = columns.map((occ) => ref.indexOf.get(key(occ))!);
    expect(new Set(place).size).toBe(ref.dim);
    array.rows.forEach((row, k) => {
      const inRef = { re: new Array<number>(ref.dim).fill(0), im: new Array<number>(ref.dim).fill(0) };
      place.forEach((p, c) => {
        inRef.re[p] = row.re[c];
        inRef.im[p] = row.im[c];
      });
      expect(norm(inRef)).toBeCloseTo(1, 12);
      expect(residual(ref, inRef, sidecar.energies[k])).toBeLessThan(1e-8);
    });
  });
});
