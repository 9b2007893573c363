// Run folders: where long work (scans, time traces, shards) leaves its results, crash-safely.
//
// A run folder holds
//   manifest.json     what the run is (kind, identity hash, spec, ...); written once, atomically
//   records.msgpack   append-only sequence of frames, one plain-object record each
//   lock              present while a writer has the folder open (pid, host, boot id)
//
// Frame layout (all integers little-endian):
//   bytes 0..3    magic "RCR1"
//   bytes 4..7    uint32 payload length n
//   bytes 8..11   uint32 CRC-32 (IEEE 802.3, as zlib.crc32) of the payload
//   bytes 12..    n bytes of payload: one MessagePack value (a map), written by msgpackr with
//                 plain maps (no record extension), so any MessagePack library reads it
//
// Crash safety: a frame is written with one append and then fsync'd before the writer reports it
// written, and the manifest is written to a temporary file, fsync'd and renamed. So a crash or a
// power loss at any instant can only leave a partial last frame (or a last frame of garbage or
// zeros, which is what some file systems show after a power loss in an extending write). On
// opening for append, a damaged frame after which no intact frame follows is such a torn tail: it
// is cut off. A damaged frame followed by intact ones cannot come from a crash (appends are
// sequential and each was synced before the next began): it is reported, never skipped silently.
//
// Records are plain objects; this layer knows nothing of what is in them, so scans, time traces
// and shard merges all use it.

import {
  closeSync,
  constants,
  existsSync,
  fstatSync,
  fsyncSync,
  ftruncateSync,
  linkSync,
  lstatSync,
  mkdirSync,
  openSync,
  readFileSync,
  renameSync,
  rmdirSync,
  statSync,
  unlinkSync,
  writeSync,
} from 'node:fs';
import { createHash, randomBytes } from 'node:crypto';
import os from 'node:os';
import path from 'node:path';
import { crc32 } from 'node:zlib';
import { Packr, Unpackr } from 'msgpackr';
import { FileSystemError, RunFileError, isSystemError, systemErrorCause } from '../errors/errors.js';
import { coreCount } from '../threads/cores.js';

export const MANIFEST_FILE = 'manifest.json';
export const RECORDS_FILE = 'records.msgpack';
export const LOCK_FILE = 'lock';
export const RUN_FORMAT = 'rungchain-run';
export const RUN_FORMAT_VERSION = 1;

const MAGIC = Buffer.from('RCR1', 'latin1');
const HEADER_BYTES = 12;
/** A length beyond this is damage, not a record (keeps a flipped length bit from asking for gigabytes). */
const MAX_RECORD_BYTES = 256 * 1024 * 1024;

// variableMapSize: the smallest map header (fixmap), as most MessagePack writers do.
const packr = new Packr({ useRecords: false, moreTypes: false, variableMapSize: true });
const unpackr = new Unpackr({ useRecords: false, mapsAsObjects: true });

export interface RunManifest {
  format: typeof RUN_FORMAT;
  format_version: number;
  /** What kind of run: "scan", "evolve", ... Readers check it before trusting the records' shape. */
  kind: string;
  /** Hash of what determines the results (spec, expanded axes), not of time or machine: equal identities can be resumed and merged. */
  identity: string;
  version: string;
  created: string;
  machine: MachineInfo;
  [field: string]: unknown;
}

export interface MachineInfo {
  hostname: string;
  platform: string;
  arch: string;
  cpus: number;
  cpu_model: string;
  memory_bytes: number;
  node: string;
}

export function machineInfo(): MachineInfo {
  const cpus = os.cpus();
  return {
    hostname: os.hostname(),
    platform: os.platform(),
    arch: os.arch(),
    cpus: coreCount(),
    cpu_model: cpus[0]?.model ?? 'unknown',
    memory_bytes: os.totalmem(),
    node: process.version,
  };
}

// ---------------------------------------------------------------------------------------------
// Writing bytes and making folders

/**
 * The bytes the run files of this process may still take: unlimited, except in tests, where past
 * the limit a write fails with ENOSPC as on a full disk (after a last short write of what still
 * fits), so tests can fill the disk without mounting a small file system. As on a disk, bytes cut
 * off again or replaced by a rename are free again.
 */
let testDiskBytesLeft = Infinity;

/** Fault injection, for tests only (tests/support/faults.mjs): the run files of this process may take this many bytes in all. */
export function limitRunFileBytes(bytes: number): void {
  testDiskBytesLeft = bytes;
}

function writeSome(fd: number, buffer: Buffer, offset: number, length: number): number {
  if (testDiskBytesLeft <= 0) {
    throw Object.assign(new Error('ENOSPC: no space left on device, write'), {
      code: 'ENOSPC',
      errno: -28,
      syscall: 'write',
    });
  }
  const written = writeSync(fd, buffer, offset, Math.min(length, testDiskBytesLeft));
  testDiskBytesLeft -= written;
  return written;
}

function testDiskGiveBack(bytes: number): void {
  testDiskBytesLeft += bytes;
}

/** Writes the whole buffer (a write may take only part of it). */
function writeAll(fd: number, buffer: Buffer): void {
  for (let written = 0; written < buffer.length;) written += writeSome(fd, buffer, written, buffer.length - written);
}

/** How to show a path the user did not type (an ancestor of one they did): relative when theirs was. */
function shownLike(given: string, absolute: string): string {
  return path.isAbsolute(given) ? absolute : path.relative(process.cwd(), absolute) || absolute;
}

/**
 * Creates a folder and any missing parents, one level at a time, and returns the folders it
 * created (outermost first). Node's recursive mkdir loops forever where a parent exists but
 * refuses new entries (/proc), so the walk is our own: up to the nearest existing ancestor, which
 * must be a folder, then down. Every failure is a FileSystemError naming the path and the cause.
 */
export function makeFolder(dir: string): string[] {
  if (dir === '') throw new FileSystemError('an empty path is not a folder');
  const target = path.resolve(dir);
  const missing: string[] = [];
  let existing = target;
  for (;;) {
    try {
      if (!statSync(existing).isDirectory()) {
        throw new FileSystemError(
          existing === target
            ? `${dir} is a file, not a folder`
            : `cannot create folder ${dir}: ${shownLike(dir, existing)} is a file, not a folder`,
        );
      }
      break;
    } catch (e) {
      if (!isSystemError(e) || (e.code !== 'ENOENT' && e.code !== 'ENOTDIR')) {
        throw isSystemError(e) ? new FileSystemError(`cannot create folder ${dir}: ${systemErrorCause(e)}`) : e;
      }
      // ENOTDIR: a file further up; keep walking to find it and name it.
      missing.unshift(existing);
      const parent = path.dirname(existing);
      if (parent === existing) throw new FileSystemError(`cannot create folder ${dir}: ${systemErrorCause(e)}`);
      existing = parent;
    }
  }
  const created: string[] = [];
  try {
    for (const folder of missing) {
      try {
        mkdirSync(folder);
        created.push(folder);
      } catch (e) {
        if (isSystemError(e) && e.code === 'EEXIST' && statSync(folder).isDirectory()) continue;
        if (isSystemError(e) && e.code === 'ENOENT') {
          // The parent exists (we just found or made it) yet the entry cannot be made: a virtual file system.
          throw new FileSystemError(
            `cannot create folder ${dir}: ${shownLike(dir, path.dirname(folder))} does not take new folders (ENOENT)`,
          );
        }
        throw isSystemError(e) ? new FileSystemError(`cannot create folder ${dir}: ${systemErrorCause(e)}`) : e;
      }
    }
  } catch (e) {
    removeFolders(created);
    throw e;
  }
  return created;
}

/** Removes folders made by makeFolder, innermost first, as long as they are empty. */
export function removeFolders(created: string[]): void {
  for (const folder of [...created].reverse()) {
    try {
      rmdirSync(folder);
    } catch {
      return;
    }
  }
}

/** Creates the folder a file will be written into (see makeFolder); refuses an empty name. */
export function makeFolderFor(file: string, option: string): string[] {
  if (file === '') throw new FileSystemError(`${option}: an empty path names no file`);
  return makeFolder(path.dirname(file));
}

// ---------------------------------------------------------------------------------------------
// Identity

/** JSON with object keys sorted at every level, so equal trees give equal text. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortKeys(value));
}

function sortKeys(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(sortKeys);
  if (value !== null && typeof value === 'object' && !(value instanceof Date)) {
    const out: Record<string, unknown> = {};
    for (const key of Object.keys(value).sort()) out[key] = sortKeys((value as Record<string, unknown>)[key]);
    return out;
  }
  return value;
}

/** SHA-256 (hex) of the canonical JSON of what determines a run's results. */
export function runIdentity(content: unknown): string {
  return createHash('sha256').update(canonicalJson(content)).digest('hex');
}

// ---------------------------------------------------------------------------------------------
// Frames

export function encodeFrame(record: unknown): Buffer {
  const payload = packr.pack(record);
  const frame = Buffer.allocUnsafe(HEADER_BYTES + payload.length);
  MAGIC.copy(frame, 0);
  frame.writeUInt32LE(payload.length, 4);
  frame.writeUInt32LE(crc32(payload), 8);
  payload.copy(frame, HEADER_BYTES);
  return frame;
}

/** Length of the intact frame starting at `offset`, or 0 if there is none. */
function intactFrameAt(buffer: Buffer, offset: number): number {
  if (offset + HEADER_BYTES > buffer.length) return 0;
  if (buffer.compare(MAGIC, 0, 4, offset, offset + 4) !== 0) return 0;
  const length = buffer.readUInt32LE(offset + 4);
  if (length > MAX_RECORD_BYTES || offset + HEADER_BYTES + length > buffer.length) return 0;
  const payload = buffer.subarray(offset + HEADER_BYTES, offset + HEADER_BYTES + length);
  if (crc32(payload) !== buffer.readUInt32LE(offset + 8)) return 0;
  return HEADER_BYTES + length;
}

export interface FrameDamage {
  /** 'torn': damage only at the end (a crash mid-append; safe to cut). 'corrupt': intact frames follow the damage. */
  kind: 'torn' | 'corrupt';
  /** Byte offset where the damage starts, and how many intact records precede it. */
  offset: number;
  recordsBefore: number;
  /** Bytes from the damage to the next intact frame (or to the end of the file). */
  bytes: number;
  /** Intact frames after the damage (corrupt only). */
  recordsAfter: number;
}

export interface ParsedFrames {
  records: unknown[];
  /** End of the last intact frame before any damage: where a torn tail is cut. */
  intactEnd: number;
  damage: FrameDamage | null;
}

/** Splits a records file into records; damage is described, never skipped silently. */
export function parseFrames(buffer: Buffer): ParsedFrames {
  const records: unknown[] = [];
  let offset = 0;
  while (offset < buffer.length) {
    const length = intactFrameAt(buffer, offset);
    if (length === 0 || !decodeInto(records, buffer, offset, length)) break;
    offset += length;
  }
  if (offset === buffer.length) return { records, intactEnd: offset, damage: null };

  // Damage at `offset`: look for any intact frame after it.
  let next = -1;
  for (let at = buffer.indexOf(MAGIC, offset + 1); at >= 0; at = buffer.indexOf(MAGIC, at + 1)) {
    if (intactFrameAt(buffer, at) > 0) {
      next = at;
      break;
    }
  }
  if (next < 0) {
    return {
      records,
      intactEnd: offset,
      damage: { kind: 'torn', offset, recordsBefore: records.length, bytes: buffer.length - offset, recordsAfter: 0 },
    };
  }
  let after = 0;
  for (let at = next; at < buffer.length;) {
    const length = intactFrameAt(buffer, at);
    if (length === 0) break;
    after++;
    at += length;
  }
  return {
    records,
    intactEnd: offset,
    damage: { kind: 'corrupt', offset, recordsBefore: records.length, bytes: next - offset, recordsAfter: after },
  };
}

function decodeInto(records: unknown[], buffer: Buffer, offset: number, length: number): boolean {
  try {
    records.push(unpackr.unpack(buffer.subarray(offset + HEADER_BYTES, offset + length)));
    return true;
  } catch {
    // An intact checksum over undecodable bytes: written by something else; treat as damage.
    return false;
  }
}

function describeDamage(file: string, damage: FrameDamage): string {
  return (
    `${file} is damaged in the middle: ${damage.bytes} unreadable bytes at byte ${damage.offset}, after record ` +
    `${damage.recordsBefore}, with ${damage.recordsAfter} intact record${damage.recordsAfter === 1 ? '' : 's'} after them. ` +
    `A crash cannot cause this (the disk or another program changed the file); nothing was changed. ` +
    `Copy the folder elsewhere before repairing it by hand`
  );
}

// ---------------------------------------------------------------------------------------------
// Reading a run (no lock: a reader may look at a folder a writer is appending to)

export interface RunContents {
  dir: string;
  manifest: RunManifest;
  records: Record<string, unknown>[];
  /** A torn last frame (a writer is mid-append, or crashed); resuming cuts it. Middle damage throws instead. */
  tornBytes: number;
  fileBytes: number;
}

export function readManifest(dir: string): RunManifest {
  const file = path.join(dir, MANIFEST_FILE);
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') {
      throw new RunFileError(
        existsSync(dir) ? `${dir} is not a run folder (no ${MANIFEST_FILE})` : `no run folder ${dir}`,
      );
    }
    if (code === 'ENOTDIR') throw new RunFileError(`${dir} is a file, not a run folder`);
    throw new RunFileError(`cannot read ${file}: ${(e as Error).message}`);
  }
  let manifest: unknown;
  try {
    manifest = JSON.parse(text);
  } catch (e) {
    throw new RunFileError(`${file} is not valid JSON (${(e as Error).message})`);
  }
  const m = manifest as Partial<RunManifest> | null;
  if (!m || m.format !== RUN_FORMAT || typeof m.identity !== 'string' || typeof m.kind !== 'string') {
    throw new RunFileError(`${file} is not a rungchain run manifest`);
  }
  if (typeof m.format_version !== 'number' || m.format_version > RUN_FORMAT_VERSION) {
    throw new RunFileError(
      `${file} has run format version ${m.format_version}; this rungchain reads up to ${RUN_FORMAT_VERSION}`,
    );
  }
  return m as RunManifest;
}

/** Reads a run folder: its manifest and every intact record. Damage in the middle is a RunFileError. */
export function readRun(dir: string): RunContents {
  const manifest = readManifest(dir);
  const file = path.join(dir, RECORDS_FILE);
  const buffer = existsSync(file) ? readFileSync(file) : Buffer.alloc(0);
  const parsed = parseFrames(buffer);
  if (parsed.damage?.kind === 'corrupt') throw new RunFileError(describeDamage(file, parsed.damage));
  return {
    dir,
    manifest,
    records: parsed.records as Record<string, unknown>[],
    tornBytes: parsed.damage ? parsed.damage.bytes : 0,
    fileBytes: buffer.length,
  };
}

// ---------------------------------------------------------------------------------------------
// The lock against two writers

export interface LockInfo {
  pid: number;
  hostname: string;
  boot_id: string | null;
  started: string;
  command: string;
}

function bootId(): string | null {
  try {
    return readFileSync('/proc/sys/kernel/random/boot_id', 'utf8').trim();
  } catch {
    return null;
  }
}

function processAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

export function readLock(dir: string): LockInfo | null {
  try {
    return JSON.parse(readFileSync(path.join(dir, LOCK_FILE), 'utf8')) as LockInfo;
  } catch {
    return null;
  }
}

/** Whether a lock's holder is certainly gone: same machine (and same boot) and no such process. */
export function lockIsStale(lock: LockInfo | null): boolean {
  // Locks are written whole (write then link), so an unreadable one is left from a crashed file system.
  if (!lock || typeof lock.pid !== 'number') return true;
  if (lock.hostname !== os.hostname()) return false;
  const boot = bootId();
  if (boot && lock.boot_id && boot !== lock.boot_id) return true;
  return !processAlive(lock.pid);
}

function describeLock(lock: LockInfo): string {
  return `pid ${lock.pid} on ${lock.hostname} since ${lock.started}`;
}

/** Takes the folder's lock or throws RunFileError naming the holder; stale locks of dead processes are broken. */
export function acquireLock(dir: string, command = process.argv.slice(1).join(' ')): () => void {
  const lockPath = path.join(dir, LOCK_FILE);
  const mine: LockInfo = {
    pid: process.pid,
    hostname: os.hostname(),
    boot_id: bootId(),
    started: new Date().toISOString(),
    command,
  };
  const text = JSON.stringify(mine);
  // Write the whole lock under a private name, then link it into place: link fails if a lock exists,
  // so taking the lock is atomic and a lock file is never seen half written.
  const temporary = path.join(dir, `.lock.${process.pid}.${randomBytes(4).toString('hex')}`);
  try {
    const fd = openSync(temporary, 'w');
    try {
      writeAll(fd, Buffer.from(text));
    } finally {
      closeSync(fd);
    }
  } catch (e) {
    try {
      unlinkSync(temporary);
    } catch {
      /* never created */
    }
    throw isSystemError(e) ? new FileSystemError(`cannot write the lock in ${dir}: ${systemErrorCause(e)}`) : e;
  }
  try {
    for (let attempt = 0; ; attempt++) {
      try {
        linkSync(temporary, lockPath);
        break;
      } catch (e) {
        if (!isSystemError(e)) throw e;
        if (e.code !== 'EEXIST') throw new FileSystemError(`cannot take the lock ${lockPath}: ${systemErrorCause(e)}`);
      }
      // Only a file can be a lock we broke: anything else at that name is not ours to move.
      const found = lstatSync(lockPath, { throwIfNoEntry: false });
      if (found && !found.isFile()) {
        throw new FileSystemError(
          `${lockPath} is not a lock file (it is a folder or a link); remove it if no scan is writing ${dir}`,
        );
      }
      const holder = readLock(dir);
      if (attempt >= 3 || !lockIsStale(holder)) {
        const who = holder ? describeLock(holder) : 'an unknown process';
        throw new RunFileError(
          `${dir} is in use by another writer (${who}); two scans cannot write one run folder at once. ` +
            `If that process is gone for good, delete ${lockPath}`,
        );
      }
      // Break the stale lock by moving it aside; only one contender can move that very file.
      const aside = path.join(dir, `.lock.stale.${process.pid}.${randomBytes(4).toString('hex')}`);
      try {
        renameSync(lockPath, aside);
      } catch {
        continue;
      }
      const moved = readFileSync(aside, 'utf8');
      if (holder && moved !== JSON.stringify(holder) && !lockIsStale(safeParse(moved))) {
        // Someone else broke it first and we moved their fresh lock: put it back.
        try {
          linkSync(aside, lockPath);
        } catch {
          /* they will find their lock gone only if a third party raced too */
        }
      }
      unlinkSync(aside);
    }
  } finally {
    unlinkSync(temporary);
  }
  let released = false;
  return () => {
    if (released) return;
    released = true;
    try {
      if (readFileSync(lockPath, 'utf8') === text) unlinkSync(lockPath);
    } catch {
      /* already gone */
    }
  };
}

function safeParse(text: string): LockInfo | null {
  try {
    return JSON.parse(text) as LockInfo;
  } catch {
    return null;
  }
}

// ---------------------------------------------------------------------------------------------
// Writing a run

function fsyncDirectory(dir: string): void {
  // Makes a created or renamed entry durable; some platforms cannot open directories, which is fine.
  let fd: number | null = null;
  try {
    fd = openSync(dir, 'r');
    fsyncSync(fd);
  } catch {
    /* not supported here */
  } finally {
    if (fd !== null) closeSync(fd);
  }
}

/**
 * Writes a file so that it is either absent, or complete: temporary file, fsync, rename, fsync the
 * folder. On failure the temporary file is removed and a FileSystemError names the file and the cause.
 */
export function writeFileAtomic(file: string, content: string | Buffer): void {
  const replaced = statSync(file, { throwIfNoEntry: false });
  if (replaced?.isDirectory()) throw new FileSystemError(`cannot write ${file}: it is a folder`);
  const temporary = `${file}.tmp.${process.pid}`;
  const spaceBefore = testDiskBytesLeft;
  try {
    const fd = openSync(temporary, 'w');
    try {
      writeAll(fd, typeof content === 'string' ? Buffer.from(content) : content);
      fsyncSync(fd);
    } finally {
      closeSync(fd);
    }
    renameSync(temporary, file);
  } catch (e) {
    try {
      unlinkSync(temporary);
    } catch {
      /* never created */
    }
    testDiskGiveBack(spaceBefore - testDiskBytesLeft);
    throw isSystemError(e) ? new FileSystemError(`cannot write ${file}: ${systemErrorCause(e)}`) : e;
  }
  testDiskGiveBack(replaced?.size ?? 0);
  fsyncDirectory(path.dirname(file));
}

export interface OpenRunOptions {
  kind: string;
  identity: string;
  /** Further manifest fields (spec, axes, ...) for a new run; ignored when resuming. */
  fields?: Record<string, unknown>;
  version?: string;
  /** Says what to do when the folder holds a different run (appended to the error). */
  mismatchHint?: string;
}

/**
 * An open run folder: holds the lock, has read the existing records (cutting a torn tail), and
 * appends new ones durably. Close it to release the lock.
 */
export class RunWriter {
  readonly dir: string;
  readonly manifest: RunManifest;
  /** Records already in the folder when it was opened. */
  readonly existing: Record<string, unknown>[];
  /** Bytes of a torn last record cut when opening (0 if none). */
  readonly cutBytes: number;
  private fd: number | null;
  private size: number;
  private readonly release: () => void;
  appended = 0;

  private constructor(
    dir: string,
    manifest: RunManifest,
    existing: Record<string, unknown>[],
    cutBytes: number,
    fd: number,
    size: number,
    release: () => void,
  ) {
    this.dir = dir;
    this.manifest = manifest;
    this.existing = existing;
    this.cutBytes = cutBytes;
    this.fd = fd;
    this.size = size;
    this.release = release;
  }

  /** Creates the folder or resumes it; refuses a folder holding a different run or locked by a live writer. */
  static open(dir: string, options: OpenRunOptions): RunWriter {
    const createdFolders = makeFolder(dir);
    let release: () => void;
    try {
      release = acquireLock(dir);
    } catch (e) {
      removeFolders(createdFolders);
      throw e;
    }
    let fd: number | null = null;
    // What this call created, removed again when opening fails, so a failed start leaves nothing.
    const createdFiles: string[] = [];
    try {
      const manifestPath = path.join(dir, MANIFEST_FILE);
      const recordsPath = path.join(dir, RECORDS_FILE);
      let manifest: RunManifest;
      if (existsSync(manifestPath)) {
        manifest = readManifest(dir);
        if (manifest.kind !== options.kind || manifest.identity !== options.identity) {
          throw new RunFileError(
            `${dir} holds a different run (${manifest.kind} ${manifest.identity.slice(0, 12)}, not ${options.kind} ` +
              `${options.identity.slice(0, 12)}): the spec, overrides or axes changed since it was started` +
              (options.mismatchHint ? `; ${options.mismatchHint}` : ''),
          );
        }
      } else {
        if (existsSync(recordsPath) && fstatSyncSafe(recordsPath) > 0) {
          throw new RunFileError(
            `${dir} has ${RECORDS_FILE} but no ${MANIFEST_FILE}; it is not a run folder this program wrote`,
          );
        }
        manifest = {
          format: RUN_FORMAT,
          format_version: RUN_FORMAT_VERSION,
          kind: options.kind,
          identity: options.identity,
          version: options.version ?? 'unknown',
          created: new Date().toISOString(),
          machine: machineInfo(),
          ...options.fields,
        };
        writeFileAtomic(manifestPath, JSON.stringify(manifest, null, 2) + '\n');
        createdFiles.push(manifestPath);
      }

      if (!existsSync(recordsPath)) createdFiles.push(recordsPath);
      fd = openSync(recordsPath, constants.O_RDWR | constants.O_CREAT | constants.O_APPEND, 0o644);
      fsyncDirectory(dir);
      const buffer = readFileSync(recordsPath);
      const parsed = parseFrames(buffer);
      let cutBytes = 0;
      if (parsed.damage?.kind === 'corrupt') throw new RunFileError(describeDamage(recordsPath, parsed.damage));
      if (parsed.damage?.kind === 'torn') {
        ftruncateSync(fd, parsed.intactEnd);
        fsyncSync(fd);
        cutBytes = parsed.damage.bytes;
      }
      return new RunWriter(
        dir,
        manifest,
        parsed.records as Record<string, unknown>[],
        cutBytes,
        fd,
        parsed.intactEnd,
        release,
      );
    } catch (e) {
      if (fd !== null) closeSync(fd);
      for (const file of createdFiles) {
        try {
          unlinkSync(file);
        } catch {
          /* not there */
        }
      }
      release();
      removeFolders(createdFolders);
      throw isSystemError(e) ? new FileSystemError(`cannot open the run folder ${dir}: ${systemErrorCause(e)}`) : e;
    }
  }

  /** Appends one record and syncs it to disk; when this returns the record survives a crash. */
  append(record: Record<string, unknown>): void {
    if (this.fd === null) throw new RunFileError(`${this.dir}: the run is closed`);
    const frame = encodeFrame(stripUndefined(record));
    const spaceBefore = testDiskBytesLeft;
    try {
      writeAll(this.fd, frame);
      fsyncSync(this.fd);
    } catch (e) {
      // A failed append (disk full) must not leave a partial frame for the next one to follow.
      try {
        ftruncateSync(this.fd, this.size);
        testDiskGiveBack(spaceBefore - testDiskBytesLeft);
      } catch {
        /* the torn tail is cut on the next open */
      }
      throw new FileSystemError(`cannot append to ${path.join(this.dir, RECORDS_FILE)}: ${systemErrorCause(e)}`);
    }
    this.size += frame.length;
    this.appended++;
  }

  close(): void {
    if (this.fd !== null) {
      closeSync(this.fd);
      this.fd = null;
    }
    this.release();
  }
}

function fstatSyncSafe(file: string): number {
  let fd: number | null = null;
  try {
    fd = openSync(file, 'r');
    return fstatSync(fd).size;
  } catch {
    return 0;
  } finally {
    if (fd !== null) closeSync(fd);
  }
}

/**
 * MessagePack has no `undefined`: such keys are dropped; typed arrays become plain arrays, so a
 * record reads the same from any MessagePack library (msgpackr would use its own extension).
 */
function stripUndefined(value: Record<string, unknown>): Record<string, unknown> {
  return plain(value) as Record<string, unknown>;
}

function plain(value: unknown): unknown {
  if (value === null || typeof value !== 'object') return value;
  if (ArrayBuffer.isView(value)) return Array.from(value as unknown as ArrayLike<number>);
  if (Array.isArray(value)) return value.map((v) => (v === undefined ? null : plain(v)));
  const out: Record<string, unknown> = {};
  for (const [key, v] of Object.entries(value)) if (v !== undefined) out[key] = plain(v);
  return out;
}
