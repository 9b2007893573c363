// The installed rungchain's version, read from its package.json: the one place it is known.

import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

export function rungchainVersion(): string {
  // dist/src/runs/ and src/runs/ both sit below the package root.
  for (const up of ['../../..', '../..']) {
    try {
      const pkg = JSON.parse(readFileSync(fileURLToPath(new URL(`${up}/package.json`, import.meta.url)), 'utf8')) as {
        name?: unknown;
        version?: unknown;
      };
      if (pkg.name === 'rungchain') return String(pkg.version);
    } catch {
      /* try the next level */
    }
  }
  return 'unknown';
}
