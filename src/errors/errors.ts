// Every failure a user can cause or meet is one of these; the command line prints
// `error: <message>` and exits with code 2 for any RungchainError, never a stack trace.

export class RungchainError extends Error {
  constructor(message: string) {
    super(message);
    this.name = new.target.name;
  }
}

/** Bad input in a model spec: names the offending key path (e.g. `levels.tunnelling[2]`). */
export class SpecError extends RungchainError {
  constructor(
    readonly keyPath: string,
    readonly problem: string,
  ) {
    super(keyPath ? `${keyPath}: ${problem}` : problem);
  }
}

/** A spec file that cannot be read or parsed at all. */
export class InputError extends RungchainError {}

/**
 * An option value the data cannot take (an axis the scan does not have, a point it did not solve).
 * `option` is the option's name as the library takes it (`parameter`, `by`, ...), `value` the value
 * as given, `problem` what is wrong; the command line shows `option` as its flag.
 */
export class OptionValueError extends InputError {
  constructor(
    readonly option: string,
    readonly value: string,
    readonly problem: string,
  ) {
    super(`${option} ${value}: ${problem}`);
  }
}

/** The problem would need more memory than allowed. */
export class ResourceError extends RungchainError {}

/** The eigensolver or propagator did not reach the requested tolerance. */
export class ConvergenceError extends RungchainError {}

/** A run folder or run file is damaged, locked or inconsistent. */
export class RunFileError extends RungchainError {}

/**
 * A file or folder that cannot be created, read or written (a path that is a file, no space left,
 * no permission): names the path and the cause. Not a property of the run: the same command
 * succeeds once the cause is gone.
 */
export class FileSystemError extends RungchainError {}

/** A request the engine does not support for this model (e.g. a term on a basis that cannot hold it). */
export class UnsupportedError extends RungchainError {}

export function isRungchainError(e: unknown): e is RungchainError {
  return e instanceof RungchainError;
}

/**
 * An error a worker thread reported by name and message, rebuilt on this thread: as the same one
 * of ours when it is one, as a ResourceError when the thread could not allocate, else as a plain
 * Error saying where it came from.
 */
export function errorFromThread(name: string, message: string, where: string): Error {
  const ours: Record<string, new (message: string) => RungchainError> = {
    InputError,
    ResourceError,
    ConvergenceError,
    RunFileError,
    FileSystemError,
    UnsupportedError,
  };
  if (name === 'SpecError') return new SpecError('', message);
  if (ours[name]) return new ours[name](message);
  if (
    name === 'RangeError' &&
    /allocation failed|Invalid typed array length|Array buffer|out of memory/i.test(message)
  ) {
    return new ResourceError(
      `${where} ran out of memory (${message}); lower the number of threads, or use a machine with more memory`,
    );
  }
  return new Error(`${where} failed: ${name}: ${message}`);
}

/** An error of a system call (fs, os): it carries an errno code such as ENOSPC and the call's name. */
export function isSystemError(e: unknown): e is NodeJS.ErrnoException & { code: string; syscall: string } {
  return (
    e instanceof Error &&
    typeof (e as NodeJS.ErrnoException).code === 'string' &&
    /^E[A-Z0-9]+$/.test((e as NodeJS.ErrnoException).code!) &&
    typeof (e as NodeJS.ErrnoException).syscall === 'string'
  );
}

const CAUSES: Record<string, string> = {
  ENOSPC: 'no space left on the device',
  EDQUOT: 'disk quota exceeded',
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  EROFS: 'read-only file system',
  EISDIR: 'it is a folder',
  ENOTDIR: 'part of the path is a file, not a folder',
  ENOENT: 'no such file or folder',
  EEXIST: 'it already exists',
  ENAMETOOLONG: 'the name is too long',
  EMFILE: 'too many open files',
  EIO: 'input/output error',
};

/** The cause of a failed system call in words, with its code: "no space left on the device (ENOSPC)". */
export function systemErrorCause(e: unknown): string {
  if (!isSystemError(e)) return e instanceof Error ? e.message : String(e);
  // Node's own text is "CODE: words, syscall 'path'": keep the words when the code is not one of ours.
  const words = CAUSES[e.code] ?? (/^[A-Z0-9]+: (.*?)(?:, \w+ '.*)?$/.exec(e.message)?.[1] || e.message);
  return `${words} (${e.code})`;
}
