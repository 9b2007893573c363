// Saved states: one .npy array (rows = states, columns = the full basis) and a JSON sidecar naming
// what the rows are and how the columns are ordered, so NumPy and Julia read them with no parser of ours.

import fs from 'node:fs';
import path from 'node:path';
import { FileSystemError, isSystemError, systemErrorCause } from '../errors/errors.js';
import { littleEndianHost, npyFileBytes, npyHeader, type NpyDescr } from '../format/npy.js';
import { buildLocalSpace } from '../basis/fock.js';
import type { Model } from '../model/model.js';
import type { KeptStates, PointPlan } from './solvePoint.js';
import type { PointRecord } from './record.js';

/** Imaginary parts this small (relative to a unit vector) are rounding: such states are saved as real. */
const REAL_IMAGINARY = 1e-12;

/** How the columns are ordered, in words and, for itinerant kinds, the table of local states. */
export function basisOrdering(model: Model): { ordering: string; local_states?: number[][] } {
  if (model.kind === 'pinned')
    return {
      ordering: 'mixed radix, site 0 fastest: column s = sum_i n_i * levels^i, n_i in 0..levels-1 the level of site i',
    };
  const local = buildLocalSpace(model.kind, model.levels, model.maxPerSite);
  const localStates = Array.from({ length: local.dim }, (_, s) =>
    Array.from(local.occupation.subarray(s * model.levels, (s + 1) * model.levels)),
  );
  return {
    ordering:
      'each site holds one of local_states (local_states[s][n] = particles in level n); the columns are every ' +
      'tuple (s_0, ..., s_{sites-1}) of local-state indices whose particles add up to `particles`, sorted ' +
      'lexicographically with site 0 most significant' +
      (model.kind === 'fermion'
        ? '; a fermion state is the product of creation operators in mode order (site-major, level-minor) on the vacuum'
        : ''),
    local_states: localStates,
  };
}

/** The element type states of this model are saved with (complex when its Hamiltonian is, or possibly for every momentum state). */
export function statesDescr(model: Model, which: 'ground' | 'all', momentumSectors: boolean): NpyDescr {
  return model.isComplex || (which === 'all' && momentumSectors) ? '<c16' : '<f8';
}

/** Size of the states file before solving: `rows` states of the plan's full dimension. */
export function plannedStatesFileBytes(plan: PointPlan, which: 'ground' | 'all', rows: number): number {
  const descr = statesDescr(plan.model, which, plan.used?.translation ?? false);
  return npyFileBytes(descr, [rows, plan.dimension]);
}

/** Refuses a path that cannot be written before a long solve: its folder must exist and be writable. */
export function assertWritableFile(file: string): void {
  const folder = path.dirname(path.resolve(file));
  try {
    if (fs.existsSync(file) && fs.statSync(file).isDirectory())
      throw new FileSystemError(`cannot write the states file ${file}: it is a folder`);
    fs.accessSync(folder, fs.constants.W_OK);
  } catch (e) {
    if (isSystemError(e)) throw new FileSystemError(`cannot write the states file ${file}: ${systemErrorCause(e)}`);
    throw e;
  }
}

/**
 * Writes `file` (.npy, rows = states) and `file`.json (what the rows are). States of a real model
 * whose imaginary parts are rounding are saved real.
 */
export function writeStatesFile(file: string, kept: KeptStates, record: PointRecord, model: Model): void {
  if (!littleEndianHost()) throw new Error('saving states needs a little-endian machine');
  const dim = record.basis.dimension;
  const complex =
    kept.interleaved && (model.isComplex || kept.vectors.some((v) => largestImaginary(v) > REAL_IMAGINARY));
  const descr: NpyDescr = complex ? '<c16' : '<f8';
  const rows = kept.vectors.length;
  let fd: number | null = null;
  try {
    fd = fs.openSync(file, 'w');
    fs.writeSync(fd, npyHeader(descr, [rows, dim]));
    for (const v of kept.vectors) {
      const row = kept.interleaved && !complex ? realParts(v) : v;
      fs.writeSync(fd, new Uint8Array(row.buffer, row.byteOffset, row.byteLength));
    }
    fs.closeSync(fd);
    fd = null;
    const sidecar = {
      format: 'rungchain states 1',
      array: path.basename(file),
      dtype: complex ? 'complex128' : 'float64',
      shape: [rows, dim],
      rows: kept.which === 'ground' ? 'ground level' : 'every solved state',
      energies: kept.energies,
      sectors: kept.labels,
      degeneracy: record.solver.degeneracy,
      degeneracy_complete: record.solver.degeneracy_complete,
      kind: model.kind,
      sites: model.sites,
      levels: model.levels,
      ...(model.kind === 'pinned' ? {} : { particles: model.particleNumber }),
      ...(model.kind === 'boson' ? { max_per_site: model.maxPerSite } : {}),
      basis: { dimension: dim, ...basisOrdering(model) },
    };
    fs.writeFileSync(`${file}.json`, JSON.stringify(sidecar, null, 1) + '\n');
  } catch (e) {
    if (fd !== null) fs.closeSync(fd);
    if (isSystemError(e)) throw new FileSystemError(`cannot write the states file ${file}: ${systemErrorCause(e)}`);
    throw e;
  }
}

function largestImaginary(v: Float64Array): number {
  let m = 0;
  for (let t = 1; t < v.length; t += 2) m = Math.max(m, Math.abs(v[t]));
  return m;
}

function realParts(v: Float64Array): Float64Array {
  const out = new Float64Array(v.length / 2);
  for (let t = 0; t < out.length; t++) out[t] = v[2 * t];
  return out;
}
