// Commands rungchain prints for the user to paste (resume a scan, read its results, merge shards)
// must start the way this very program can be started from where the user stands: after
// `npm install` in a clone the name `rungchain` is not on PATH, so such a command would fail.

import { accessSync, constants, realpathSync } from 'node:fs';
import path from 'node:path';
import { shellCommand, shellQuote } from '../src/format/tables.js';

function realPath(file: string): string | null {
  try {
    return realpathSync(file);
  } catch {
    return null;
  }
}

/**
 * What `name` runs when typed in a shell with this PATH (symlinks followed), or null. Under npm
 * (npx, npm run) the node_modules/.bin folders npm put on PATH are not the user's shell's: skipped.
 */
function foundOnPath(name: string, underNpm: boolean): string | null {
  for (const dir of (process.env.PATH ?? '').split(path.delimiter)) {
    if (!dir || (underNpm && path.basename(dir) === '.bin' && dir.split(path.sep).includes('node_modules'))) continue;
    const candidate = path.join(dir, name);
    try {
      accessSync(candidate, constants.X_OK);
    } catch {
      continue;
    }
    return realPath(candidate);
  }
  return null;
}

/**
 * How to start this program from the current folder: `rungchain` when that name on PATH is this
 * program, `npx rungchain` when npx started it, otherwise `node <script>` (relative to the current
 * folder when the script lies below it, else absolute). Outside the command line (a library call,
 * a test) plainly `rungchain`.
 */
export function invocation(): string {
  const script = process.argv[1];
  if (!script || !/^rungchain(\.js)?$/.test(path.basename(script))) return 'rungchain';
  const underNpm = process.env.npm_command !== undefined;
  if (underNpm && script.split(path.sep).includes('.bin')) return 'npx rungchain';
  const program = realPath(script);
  if (program !== null && foundOnPath('rungchain', underNpm) === program) return 'rungchain';
  const node = foundOnPath('node', underNpm) === realPath(process.execPath) ? 'node' : shellQuote(process.execPath);
  const relative = path.relative(process.cwd(), script);
  const shown =
    relative !== '' && !relative.startsWith('..') && !path.isAbsolute(relative) ? relative : path.resolve(script);
  return `${node} ${shellQuote(shown)}`;
}

/** A command to print: the invocation, then the arguments quoted for a POSIX shell. */
export function commandLine(args: string[]): string {
  return shellCommand(invocation(), args);
}
