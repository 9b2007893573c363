import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, truncateSync, writeFileSync, existsSync, appendFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { crc32 } from 'node:zlib';
import { FileSystemError, RunFileError } from '../../src/errors/errors.js';
import {
  encodeFrame,
  makeFolder,
  parseFrames,
  readRun,
  removeFolders,
  RunWriter,
  runIdentity,
  LOCK_FILE,
  RECORDS_FILE,
} from '../../src/runs/runFiles.js';

const tmp = () => mkdtempSync(path.join(os.tmpdir(), 'rungchain-runfiles-'));

function recordOf(k: number) {
  return {
    index: k,
    params: { 'exchange.strength': 0.5 * k },
    status: 'done',
    energies: [-1.25 * (k + 1), 0.5 + k],
    note: `point ${k}`,
  };
}

/** A run folder holding `n` records, closed. */
function runWith(n: number, dir = tmp()): string {
  const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
  for (let k = 0; k < n; k++) w.append(recordOf(k));
  w.close();
  return dir;
}

const recordsPath = (dir: string) => path.join(dir, RECORDS_FILE);

/** Byte offsets where each frame starts (walking the length fields). */
function frameStarts(buffer: Buffer): number[] {
  const starts: number[] = [];
  for (let at = 0; at < buffer.length; at += 12 + buffer.readUInt32LE(at + 4)) starts.push(at);
  return starts;
}

describe('frame layout', () => {
  it('CRC-32 is the IEEE polynomial: check value of "123456789" is 0xCBF43926', () => {
    // Standard check value of CRC-32/ISO-HDLC (Williams, "A Painless Guide to CRC Error Detection", 1993).
    expect(crc32(Buffer.from('123456789'))).toBe(0xcbf43926);
  });

  it('a frame is magic, length, CRC-32 of the payload, then plain MessagePack', () => {
    const frame = encodeFrame({ a: 1 });
    // MessagePack specification: fixmap of 1 (0x81), fixstr "a" (0xa1 0x61), positive fixint 1 (0x01).
    const payload = Buffer.from([0x81, 0xa1, 0x61, 0x01]);
    expect(frame.subarray(0, 4).toString('latin1')).toBe('RCR1');
    expect(frame.readUInt32LE(4)).toBe(payload.length);
    expect(frame.readUInt32LE(8)).toBe(crc32(payload));
    expect(frame.subarray(12)).toEqual(payload);
  });

  it('floats are written as 64-bit doubles, so values read back bit for bit', () => {
    const x = 0.1 + 0.2;
    const frame = encodeFrame({ x });
    // MessagePack specification: float 64 is 0xcb followed by the big-endian IEEE 754 double.
    const at = frame.indexOf(0xcb, 12);
    expect(at).toBeGreaterThan(0);
    expect(frame.readDoubleBE(at + 1)).toBe(x);
    expect(parseFrames(frame).records).toEqual([{ x }]);
  });
});

describe('run folders', () => {
  it('records appended are read back in order, with the manifest', () => {
    const dir = runWith(5);
    const run = readRun(dir);
    expect(run.manifest.kind).toBe('test');
    expect(run.manifest.identity).toBe('abc');
    expect(run.records).toEqual([0, 1, 2, 3, 4].map(recordOf));
    expect(run.tornBytes).toBe(0);
  });

  it('resuming appends after the existing records', () => {
    const dir = runWith(3);
    const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
    expect(w.existing).toEqual([0, 1, 2].map(recordOf));
    w.append(recordOf(3));
    w.close();
    expect(readRun(dir).records).toEqual([0, 1, 2, 3].map(recordOf));
  });

  it('a truncated last record (cut at every byte of its frame) resumes cleanly', () => {
    const full = readFileSync(recordsPath(runWith(4)));
    const starts = frameStarts(full);
    const lastStart = starts[3];
    for (let cut = lastStart + 1; cut < full.length; cut += 3) {
      const dir = runWith(4);
      truncateSync(recordsPath(dir), cut);
      expect(readRun(dir).tornBytes).toBe(cut - lastStart);
      const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
      expect(w.cutBytes).toBe(cut - lastStart);
      expect(w.existing).toEqual([0, 1, 2].map(recordOf));
      w.append(recordOf(9));
      w.close();
      expect(readRun(dir).records).toEqual([0, 1, 2, 9].map(recordOf));
    }
  });

  it('a bit flipped anywhere in the last record (header or payload) resumes cleanly, dropping it', () => {
    const full = readFileSync(recordsPath(runWith(4)));
    const lastStart = frameStarts(full)[3];
    for (let byte = lastStart; byte < full.length; byte += 5) {
      const dir = runWith(4);
      const damaged = Buffer.from(full);
      damaged[byte] ^= 1 << (byte % 8);
      writeFileSync(recordsPath(dir), damaged);
      const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
      expect(w.existing).toEqual([0, 1, 2].map(recordOf));
      w.close();
      expect(readRun(dir).records).toHaveLength(3);
    }
  });

  it('a tail of zeros (what a power loss can leave after an extending write) is cut', () => {
    const dir = runWith(2);
    appendFileSync(recordsPath(dir), Buffer.alloc(4096));
    const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
    expect(w.cutBytes).toBe(4096);
    expect(w.existing).toHaveLength(2);
    w.close();
  });

  it('a bit flipped in a middle record is reported, not skipped, and the file is left untouched', () => {
    const full = readFileSync(recordsPath(runWith(5)));
    const starts = frameStarts(full);
    // One flip in the payload, one in the length field, one in the magic, each in record 2.
    for (const byte of [starts[2] + 20, starts[2] + 5, starts[2] + 1]) {
      const dir = runWith(5);
      const damaged = Buffer.from(full);
      damaged[byte] ^= 0x10;
      writeFileSync(recordsPath(dir), damaged);
      expect(() => readRun(dir)).toThrow(RunFileError);
      expect(() => readRun(dir)).toThrow(/damaged in the middle.*after record 2, with 2 intact records after/);
      expect(() => RunWriter.open(dir, { kind: 'test', identity: 'abc' })).toThrow(/damaged in the middle/);
      expect(readFileSync(recordsPath(dir))).toEqual(damaged);
      // The refused writer released its lock.
      expect(existsSync(path.join(dir, LOCK_FILE))).toBe(false);
    }
  });

  it('a folder holding a different run is refused', () => {
    const dir = runWith(1);
    expect(() => RunWriter.open(dir, { kind: 'test', identity: 'xyz' })).toThrow(/holds a different run/);
    expect(() => RunWriter.open(dir, { kind: 'other', identity: 'abc' })).toThrow(/holds a different run/);
  });

  it('identity ignores key order but not values', () => {
    expect(runIdentity({ a: 1, b: { c: [1, 2], d: 'x' } })).toBe(runIdentity({ b: { d: 'x', c: [1, 2] }, a: 1 }));
    expect(runIdentity({ a: 1 })).not.toBe(runIdentity({ a: 2 }));
  });
});

describe('the lock against two writers', () => {
  it('a second writer is refused while the first holds the folder, and admitted after it closes', () => {
    const dir = tmp();
    const first = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
    expect(() => RunWriter.open(dir, { kind: 'test', identity: 'abc' })).toThrow(
      new RegExp(`in use by another writer \\(pid ${process.pid}`),
    );
    first.close();
    expect(existsSync(path.join(dir, LOCK_FILE))).toBe(false);
    RunWriter.open(dir, { kind: 'test', identity: 'abc' }).close();
  });

  it('a lock left by a process that no longer exists is taken over', () => {
    const dir = runWith(1);
    // A real pid that has certainly exited: a child we ran to completion.
    const child = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))'], {
      encoding: 'utf8',
    });
    const deadPid = Number(child.stdout);
    writeFileSync(
      path.join(dir, LOCK_FILE),
      JSON.stringify({ pid: deadPid, hostname: os.hostname(), boot_id: null, started: 'earlier', command: 'x' }),
    );
    const w = RunWriter.open(dir, { kind: 'test', identity: 'abc' });
    expect(JSON.parse(readFileSync(path.join(dir, LOCK_FILE), 'utf8')).pid).toBe(process.pid);
    w.close();
  });

  it('a lock from before a reboot is stale even if its pid now belongs to a live process', () => {
    const dir = runWith(1);
    // Our own (live) pid, but another boot id: the machine restarted since the lock was written.
    writeFileSync(
      path.join(dir, LOCK_FILE),
      JSON.stringify({
        pid: process.pid,
        hostname: os.hostname(),
        boot_id: 'another-boot',
        started: 'earlier',
        command: 'x',
      }),
    );
    const hasBootId = existsSync('/proc/sys/kernel/random/boot_id');
    if (hasBootId) RunWriter.open(dir, { kind: 'test', identity: 'abc' }).close();
    else expect(() => RunWriter.open(dir, { kind: 'test', identity: 'abc' })).toThrow(/in use/);
  });

  it('a lock held on another machine is never broken from here', () => {
    const dir = runWith(1);
    writeFileSync(
      path.join(dir, LOCK_FILE),
      JSON.stringify({ pid: 1, hostname: 'some-other-node', boot_id: 'b', started: 'earlier', command: 'x' }),
    );
    expect(() => RunWriter.open(dir, { kind: 'test', identity: 'abc' })).toThrow(
      /in use by another writer \(pid 1 on some-other-node/,
    );
  });
});

describe('making folders', () => {
  it('creates missing parents one level at a time and reports what it made; an existing folder is fine', () => {
    const base = tmp();
    const created = makeFolder(path.join(base, 'a', 'b', 'c'));
    expect(created).toEqual(['a', 'a/b', 'a/b/c'].map((p) => path.join(base, p)));
    expect(makeFolder(path.join(base, 'a', 'b'))).toEqual([]);
    removeFolders(created);
    expect(existsSync(path.join(base, 'a'))).toBe(false);
  });

  it('a file on the way is named, and nothing is created', () => {
    const base = tmp();
    writeFileSync(path.join(base, 'f'), 'x');
    expect(() => makeFolder(path.join(base, 'f'))).toThrow(
      new RegExp(`^${path.join(base, 'f')} is a file, not a folder$`),
    );
    expect(() => makeFolder(path.join(base, 'f', 'g', 'h'))).toThrow(FileSystemError);
    expect(() => makeFolder(path.join(base, 'f', 'g', 'h'))).toThrow(/f is a file, not a folder/);
    expect(() => makeFolder('')).toThrow(FileSystemError);
  });

  // Linux's /proc exists but refuses new entries with ENOENT, where Node's recursive mkdir loops
  // forever (found by fuzzing --out; it also hung `rungchain demo` started inside /proc).
  it.skipIf(!existsSync('/proc/self'))('a parent that refuses new entries is an error, not an endless loop', () => {
    expect(() => makeFolder('/proc/rungchain-nope/deeper')).toThrow(
      /cannot create folder \/proc\/rungchain-nope\/deeper: \/proc does not take new folders \(ENOENT\)/,
    );
  });
});
