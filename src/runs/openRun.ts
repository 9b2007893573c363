// Opening the run folder of a command that writes one (scan, evolve): the manifest saying what the
// run is, the lock, the records already there to resume from, and the words for what opening or
// writing found: another run in the folder, a torn last record, a failed write.

import { FileSystemError } from '../errors/errors.js';
import { RunWriter } from './runFiles.js';
import { rungchainVersion } from './version.js';

export interface RunFolderRequest {
  kind: string;
  dir: string;
  identity: string;
  specPath: string;
  overrides: string[];
  /** What the user can do when the folder holds another run (the command line words it). */
  otherRunHint?: string;
  /** The spec tree after the overrides. */
  spec: Record<string, unknown>;
  /** Manifest fields of this kind of run, written after the spec's. */
  fields: Record<string, unknown>;
}

/** Creates the run folder, or opens it to resume; refuses a folder holding another run or locked by a live writer. */
export function openRunFolder(request: RunFolderRequest): RunWriter {
  const { dir } = request;
  return RunWriter.open(dir, {
    kind: request.kind,
    identity: request.identity,
    version: rungchainVersion(),
    mismatchHint: request.otherRunHint,
    fields: { spec_path: request.specPath, overrides: request.overrides, spec: request.spec, ...request.fields },
  });
}

/** The line telling that opening cut a torn last record, and what becomes of its work; null when none was cut. */
export function tornRecordNote(writer: RunWriter, consequence: string): string | null {
  return writer.cutBytes > 0
    ? `dropped a torn last record (${writer.cutBytes} bytes, a write cut short); ${consequence}`
    : null;
}

/** A write into the run folder failed (disk full, folder removed): what is kept, and how to go on once that is fixed. */
export function failedWriteError(error: FileSystemError, kept: string, resumeCommand: string): FileSystemError {
  return new FileSystemError(`${error.message}; ${kept}: once that is fixed, resume with: ${resumeCommand}`);
}

/** Calls `onStop` on SIGINT and SIGTERM (a long run saves its work instead of dying) until the returned function is called. */
export function onStopSignals(onStop: () => void): () => void {
  const signals: NodeJS.Signals[] = ['SIGINT', 'SIGTERM'];
  for (const signal of signals) process.on(signal, onStop);
  return () => {
    for (const signal of signals) process.off(signal, onStop);
  };
}
