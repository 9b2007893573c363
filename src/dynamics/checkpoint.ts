// The checkpoint of an unfinished trace, so an interrupted trace resumes from its last saved state:
// checkpoint-<point>.bin in the run folder, written atomically, deleted when the trace is done.
//   bytes 0..3 "RCK1", 4..7 uint32 header length h (LE), then h bytes of JSON header
//   { identity, point, dim, next_frame, time, error_bound, matvecs, steps, crc32 }, then psi(time)
//   and psi(0) as little-endian float64, interleaved re,im, 2*dim each.

import { existsSync, readdirSync, readFileSync, unlinkSync } from 'node:fs';
import path from 'node:path';
import { crc32 } from 'node:zlib';
import type { EvolutionCheckpoint } from './evolution.js';
import { writeFileAtomic } from '../runs/runFiles.js';

const CHECKPOINT_MAGIC = Buffer.from('RCK1', 'latin1');

export function checkpointPath(dir: string, point: number): string {
  return path.join(dir, `checkpoint-${point}.bin`);
}

/** Deletes a point's checkpoint and any temporary copy a killed writer left half written. */
export function removeCheckpoint(dir: string, point: number): void {
  const name = path.basename(checkpointPath(dir, point));
  for (const file of readdirSync(dir)) {
    if (file === name || file.startsWith(`${name}.tmp.`)) unlinkSync(path.join(dir, file));
  }
}

/** Deletes the temporary copies of every point's checkpoint that a killed writer left half written. */
export function removeTemporaryCheckpoints(dir: string): void {
  for (const file of readdirSync(dir)) if (/^checkpoint-\d+\.bin\.tmp\./.test(file)) unlinkSync(path.join(dir, file));
}

export function writeCheckpoint(dir: string, identity: string, point: number, c: EvolutionCheckpoint): void {
  const dim = c.psi.length / 2;
  const data = Buffer.alloc(2 * c.psi.length * 8);
  for (let k = 0; k < c.psi.length; k++) {
    data.writeDoubleLE(c.psi[k], 8 * k);
    data.writeDoubleLE(c.psi0[k], 8 * (c.psi.length + k));
  }
  const header = Buffer.from(
    JSON.stringify({
      identity,
      point,
      dim,
      next_frame: c.nextFrame,
      time: c.time,
      error_bound: c.errorBound,
      matvecs: c.matvecs,
      steps: c.steps,
      crc32: crc32(data),
    }),
  );
  const length = Buffer.alloc(4);
  length.writeUInt32LE(header.length, 0);
  writeFileAtomic(checkpointPath(dir, point), Buffer.concat([CHECKPOINT_MAGIC, length, header, data]));
}

/** The checkpoint of a point, or null when there is none or it does not belong to this run (then it is ignored, not trusted). */
export function readCheckpoint(dir: string, identity: string, point: number, dim: number): EvolutionCheckpoint | null {
  const file = checkpointPath(dir, point);
  if (!existsSync(file)) return null;
  const buffer = readFileSync(file);
  if (buffer.length < 8 || buffer.compare(CHECKPOINT_MAGIC, 0, 4, 0, 4) !== 0) return null;
  const headerLength = buffer.readUInt32LE(4);
  let header: Record<string, number | string>;
  try {
    header = JSON.parse(buffer.subarray(8, 8 + headerLength).toString('utf8')) as Record<string, number | string>;
  } catch {
    return null;
  }
  const data = buffer.subarray(8 + headerLength);
  if (
    header.identity !== identity ||
    header.point !== point ||
    header.dim !== dim ||
    data.length !== 32 * dim ||
    crc32(data) !== header.crc32
  ) {
    return null;
  }
  const psi = new Float64Array(2 * dim);
  const psi0 = new Float64Array(2 * dim);
  for (let k = 0; k < 2 * dim; k++) {
    psi[k] = data.readDoubleLE(8 * k);
    psi0[k] = data.readDoubleLE(8 * (2 * dim + k));
  }
  return {
    nextFrame: Number(header.next_frame),
    time: Number(header.time),
    psi,
    psi0,
    errorBound: Number(header.error_bound),
    matvecs: Number(header.matvecs),
    steps: Number(header.steps),
  };
}
