// Where a run is written when no --out is given.

import path from 'node:path';

/** runs/<spec name>-<identity prefix>[/shard-IofN]: the same command finds the same folder, so it resumes. */
export function defaultRunDir(
  specPath: string,
  identity: string,
  shard?: { index: number; count: number } | null,
): string {
  const base = path.basename(specPath).replace(/\.(toml|json)$/i, '');
  const dir = path.join('runs', `${base}-${identity.slice(0, 8)}`);
  return shard ? path.join(dir, `shard-${shard.index}of${shard.count}`) : dir;
}
