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
