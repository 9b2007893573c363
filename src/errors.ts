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

/** The problem would need more memory than allowed. */
export class ResourceError extends RungchainError {}

/** The eigensolver or propagator did not reach the requested tolerance. */
export class ConvergenceError extends RungchainError {}

/** A run folder or run file is damaged, locked or inconsistent. */
export class RunFileError extends RungchainError {}

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
  const ours: Record<string, new (message: string) => RungchainError> = { InputError, ResourceError, ConvergenceError, RunFileError, UnsupportedError };
  if (name === 'SpecError') return new SpecError('', message);
  if (ours[name]) return new ours[name](message);
  if (name === 'RangeError' && /allocation failed|Invalid typed array length|Array buffer|out of memory/i.test(message)) {
    return new ResourceError(`${where} ran out of memory (${message}); lower the number of threads, or use a machine with more memory`);
  }
  return new Error(`${where} failed: ${name}: ${message}`);
}
