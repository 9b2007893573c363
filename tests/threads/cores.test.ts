// The one core count: what Node reports this process may run on (its documented
// os.availableParallelism, which honours CPU affinity), never less than one.
import os from 'node:os';
import { describe, expect, it } from 'vitest';
import { coreCount } from '../../src/threads/cores.js';

describe('coreCount', () => {
  it("is Node's availableParallelism, at least 1", () => {
    expect(coreCount()).toBe(os.availableParallelism());
    expect(coreCount()).toBeGreaterThanOrEqual(1);
  });
});
