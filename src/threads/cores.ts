// How many cores this process may use: the one count behind worker pools, product threads and the
// machine description of a run.

import os from 'node:os';

/** Cores this process may use (at least 1): Node's availableParallelism, which honours CPU affinity. */
export function coreCount(): number {
  return Math.max(1, typeof os.availableParallelism === 'function' ? os.availableParallelism() : os.cpus().length);
}
