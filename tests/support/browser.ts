// The browser for tests that open HTML in one, looked for in this order: the executable that
// RUNGCHAIN_BROWSER names; the headless Chromium that `npm install` brings (@sparticuz/chromium,
// Linux x64 only); the usual system installs of Chromium or Google Chrome on Linux and macOS.
// Finding none is one line saying how to get one.

import { existsSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import os from 'node:os';
import path from 'node:path';
import { chromium, type Browser } from 'playwright-core';
import { ROOT } from './cli.js';

export const BROWSER_ENV = 'RUNGCHAIN_BROWSER';

// For every browser found, the bundled one too (its own serverless flags run it in one process,
// which ends when the first page closes, and turn web security off): run as root in a container, so
// no sandbox; no GPU; nothing reaching out (a closed network refuses background connections).
export const BROWSER_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

export const HOW_TO_GET_ONE = `run \`npm install\` (it brings a headless Chromium on Linux x64), or install Chromium or Google Chrome (Debian: apt-get install chromium), or set ${BROWSER_ENV}=/path/to/chrome`;

export class BrowserNotFoundError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'BrowserNotFoundError';
    // The message says all there is to do: no stack trace under it.
    this.stack = `${this.name}: ${message}`;
  }
}

export interface BrowserChoice {
  executablePath: string;
  /** Where it was found, for messages. */
  source: string;
  /** Shared libraries shipped beside a bundled browser, for a machine that lacks them. */
  libraryPath?: string;
}

export interface LocateOptions {
  env?: NodeJS.ProcessEnv;
  platform?: NodeJS.Platform;
  isFile?: (file: string) => boolean;
  /** The browser `npm install` brought, or null where it has none for this machine. */
  bundled?: () => Promise<BrowserChoice | null>;
}

const isFileOnDisk = (file: string) => {
  try {
    return statSync(file).isFile();
  } catch {
    return false;
  }
};

/** Where Chromium or Google Chrome usually lives, most specific first. */
export function systemBrowserCandidates(platform: NodeJS.Platform, env: NodeJS.ProcessEnv = process.env): string[] {
  if (platform === 'darwin') {
    const apps = ['Google Chrome.app/Contents/MacOS/Google Chrome', 'Chromium.app/Contents/MacOS/Chromium'];
    const roots = ['/Applications', ...(env.HOME ? [path.join(env.HOME, 'Applications')] : [])];
    return roots.flatMap((root) => apps.map((app) => path.join(root, app)));
  }
  if (platform !== 'linux') return [];
  const names = ['chromium', 'chromium-browser', 'google-chrome', 'google-chrome-stable'];
  const dirs = [...(env.PATH ?? '').split(path.delimiter).filter(Boolean), '/usr/bin', '/snap/bin'];
  return [...new Set(dirs.flatMap((dir) => names.map((name) => path.join(dir, name))))];
}

/** The browser to use, without starting it. */
export async function locateBrowser(options: LocateOptions = {}): Promise<BrowserChoice> {
  const env = options.env ?? process.env;
  const isFile = options.isFile ?? isFileOnDisk;
  const chosen = env[BROWSER_ENV];
  if (chosen) {
    if (!isFile(chosen))
      throw new BrowserNotFoundError(
        `${BROWSER_ENV}=${chosen} is not a file: point it at a Chromium or Chrome executable, or unset it to use the one \`npm install\` brings`,
      );
    return { executablePath: chosen, source: BROWSER_ENV };
  }
  const bundled = await (options.bundled ?? bundledChromium)();
  if (bundled) return bundled;
  const system = systemBrowserCandidates(options.platform ?? process.platform, env).find(isFile);
  if (system) return { executablePath: system, source: system };
  throw new BrowserNotFoundError(`No browser found for the tests that open HTML reports: ${HOW_TO_GET_ONE}`);
}

/**
 * The headless Chromium of @sparticuz/chromium, unpacked once per version into
 * node_modules/.cache. Null where the package is absent or ships no build for this machine.
 */
export async function bundledChromium(
  cacheRoot = path.join(ROOT, 'node_modules', '.cache', 'rungchain-browser'),
): Promise<BrowserChoice | null> {
  if (process.platform !== 'linux' || process.arch !== 'x64') return null;
  let packageDir: string;
  let sparticuz: typeof import('@sparticuz/chromium');
  try {
    packageDir = path.resolve(path.dirname(createRequire(import.meta.url).resolve('@sparticuz/chromium')), '..');
    sparticuz = await import('@sparticuz/chromium');
  } catch {
    return null;
  }
  const version = JSON.parse(readFileSync(path.join(packageDir, 'package.json'), 'utf8')).version as string;
  const dir = path.join(cacheRoot, `chromium-${version}`);
  if (!existsSync(path.join(dir, 'complete')))
    await unpackBundled(sparticuz, path.join(packageDir, 'bin'), cacheRoot, dir);
  return {
    executablePath: path.join(dir, 'chromium'),
    source: `@sparticuz/chromium ${version}`,
    libraryPath: path.join(dir, 'al2023', 'lib'),
  };
}

async function unpackBundled(
  sparticuz: typeof import('@sparticuz/chromium'),
  binDir: string,
  cacheRoot: string,
  dir: string,
) {
  // The package unpacks into os.tmpdir(), where it would also take any `chromium` already lying
  // there (another version's, or half written by a parallel run) for its own. So it unpacks into a
  // fresh folder of ours (os.tmpdir() reads TMPDIR), moved into place whole once complete.
  mkdirSync(cacheRoot, { recursive: true });
  const staging = mkdtempSync(path.join(cacheRoot, 'unpacking-'));
  const saved = process.env.TMPDIR;
  process.env.TMPDIR = staging;
  try {
    if (os.tmpdir() !== staging)
      throw new Error(`cannot unpack the bundled Chromium: the temporary folder stays ${os.tmpdir()}`);
    await sparticuz.default.executablePath(binDir);
    // NSS and expat for machines without them (the binary's only libraries beyond libc).
    await sparticuz.inflate(path.join(binDir, 'al2023.tar.br'));
  } finally {
    if (saved === undefined) delete process.env.TMPDIR;
    else process.env.TMPDIR = saved;
  }
  writeFileSync(path.join(staging, 'complete'), '');
  try {
    renameSync(staging, dir);
  } catch (e) {
    // A parallel run moved its copy in first.
    rmSync(staging, { recursive: true, force: true });
    if (!existsSync(path.join(dir, 'complete'))) throw e;
  }
}

const firstLine = (e: unknown) => String(e instanceof Error ? e.message : e).split('\n')[0];

async function launch(choice: BrowserChoice, libraryPath?: string): Promise<Browser> {
  const env = libraryPath
    ? { ...process.env, LD_LIBRARY_PATH: [libraryPath, process.env.LD_LIBRARY_PATH].filter(Boolean).join(':') }
    : undefined;
  return chromium.launch({ executablePath: choice.executablePath, args: BROWSER_ARGS, headless: true, env });
}

/**
 * Starts the browser `locateBrowser` finds; a bundled one that will not start gives way to a
 * system install. Any failure is one line saying how to get a browser that works.
 */
export async function launchBrowser(options: LocateOptions = {}): Promise<{ browser: Browser; choice: BrowserChoice }> {
  const choice = await locateBrowser(options);
  let failure: unknown;
  let systemFailure = '';
  try {
    return { browser: await launch(choice), choice };
  } catch (e) {
    failure = e;
  }
  if (choice.libraryPath) {
    // A machine without the NSS libraries: the package ships them for its own Linux.
    try {
      return { browser: await launch(choice, choice.libraryPath), choice };
    } catch (e) {
      failure = e;
    }
    const system = await locateBrowser({ ...options, bundled: async () => null }).catch(() => null);
    if (system) {
      try {
        return { browser: await launch(system), choice: system };
      } catch (e) {
        systemFailure = `, nor did ${system.executablePath}: ${firstLine(e)}`;
      }
    }
  }
  throw new BrowserNotFoundError(
    `The browser from ${choice.source} (${choice.executablePath}) did not start: ${firstLine(failure)}${systemFailure}; ${HOW_TO_GET_ONE}`,
  );
}
