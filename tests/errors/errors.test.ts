import { describe, expect, it } from 'vitest';
import {
  ConvergenceError,
  errorFromThread,
  isRungchainError,
  ResourceError,
  SpecError,
} from '../../src/errors/errors.js';

// Errors cross threads as a name and a message; the command line turns only our own classes into
// a one-line message with exit code 2, so the class must survive the trip.
describe('errors reported by another thread', () => {
  it('our own classes come back as themselves, with the same message', () => {
    const spec = errorFromThread(
      'SpecError',
      'solve.sector.momentum[0]: momentum index must be below 8, got 9',
      'a sector thread',
    );
    expect(spec).toBeInstanceOf(SpecError);
    expect(spec.message).toBe('solve.sector.momentum[0]: momentum index must be below 8, got 9');
    const convergence = errorFromThread('ConvergenceError', 'eigensolver did not converge', 'a sector thread');
    expect(convergence).toBeInstanceOf(ConvergenceError);
    expect(convergence.message).toBe('eigensolver did not converge');
  });

  it('a failed allocation becomes a ResourceError that says what to do', () => {
    const e = errorFromThread('RangeError', 'Array buffer allocation failed', 'a sector thread');
    expect(e).toBeInstanceOf(ResourceError);
    expect(e.message).toMatch(
      /^a sector thread ran out of memory \(Array buffer allocation failed\); lower the number of threads/,
    );
  });

  it('anything else stays an internal error and says where it came from', () => {
    const e = errorFromThread('TypeError', 'x is not a function', 'the sector build thread');
    expect(isRungchainError(e)).toBe(false);
    expect(e.message).toBe('the sector build thread failed: TypeError: x is not a function');
  });
});
