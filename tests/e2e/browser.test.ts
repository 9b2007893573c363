import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  BROWSER_ENV,
  BrowserNotFoundError,
  bundledChromium,
  launchBrowser,
  locateBrowser,
  systemBrowserCandidates,
  type BrowserChoice,
} from '../support/browser.js';

const nothingBundled = async () => null;
const noFiles = () => false;

/** The rejection of a promise, which must be a one-line BrowserNotFoundError. */
async function oneLineFailure(promise: Promise<unknown>): Promise<string> {
  const error = await promise.then(
    () => null,
    (e: unknown) => e,
  );
  expect(error).toBeInstanceOf(BrowserNotFoundError);
  const { message, stack } = error as BrowserNotFoundError;
  expect(message.split('\n')).toHaveLength(1);
  expect(stack!.split('\n')).toHaveLength(1);
  return message;
}

describe('finding a browser for the report tests', () => {
  it(`takes ${BROWSER_ENV} first, before the bundled one`, async () => {
    let askedBundled = false;
    const choice = await locateBrowser({
      env: { [BROWSER_ENV]: '/opt/custom/chrome' },
      isFile: (f) => f === '/opt/custom/chrome',
      bundled: async () => ((askedBundled = true), { executablePath: '/bundled/chromium', source: 'bundled' }),
    });
    expect(choice.executablePath).toBe('/opt/custom/chrome');
    expect(askedBundled).toBe(false);
  });

  it(`says in one line that ${BROWSER_ENV} names no file`, async () => {
    const message = await oneLineFailure(
      locateBrowser({ env: { [BROWSER_ENV]: '/nowhere/chrome' }, isFile: noFiles, bundled: nothingBundled }),
    );
    expect(message).toContain(`${BROWSER_ENV}=/nowhere/chrome`);
  });

  it('takes the bundled browser before a system one', async () => {
    const bundled: BrowserChoice = { executablePath: '/bundled/chromium', source: 'bundled' };
    const choice = await locateBrowser({
      env: { PATH: '/usr/bin' },
      platform: 'linux',
      isFile: () => true,
      bundled: async () => bundled,
    });
    expect(choice).toBe(bundled);
  });

  // Common practice: where Debian, Ubuntu (snap), Google's packages and macOS put these browsers.
  it('looks for chromium, chromium-browser, google-chrome and google-chrome-stable in PATH, /usr/bin and /snap/bin on Linux', () => {
    const candidates = systemBrowserCandidates('linux', { PATH: '/home/u/bin:/usr/local/bin' });
    for (const name of ['chromium', 'chromium-browser', 'google-chrome', 'google-chrome-stable']) {
      for (const dir of ['/home/u/bin', '/usr/local/bin', '/usr/bin', '/snap/bin'])
        expect(candidates).toContain(`${dir}/${name}`);
    }
    expect(candidates.indexOf('/home/u/bin/google-chrome')).toBeLessThan(candidates.indexOf('/usr/bin/chromium'));
  });

  it('looks in /Applications and ~/Applications on macOS', () => {
    const candidates = systemBrowserCandidates('darwin', { HOME: '/Users/u' });
    expect(candidates).toContain('/Applications/Google Chrome.app/Contents/MacOS/Google Chrome');
    expect(candidates).toContain('/Applications/Chromium.app/Contents/MacOS/Chromium');
    expect(candidates).toContain('/Users/u/Applications/Google Chrome.app/Contents/MacOS/Google Chrome');
  });

  it('falls back to a system browser when nothing is bundled for this machine', async () => {
    const choice = await locateBrowser({
      env: { PATH: '/usr/local/bin' },
      platform: 'linux',
      isFile: (f) => f === '/usr/bin/google-chrome-stable',
      bundled: nothingBundled,
    });
    expect(choice.executablePath).toBe('/usr/bin/google-chrome-stable');
  });

  it('finding none, says in one line how to get one', async () => {
    const message = await oneLineFailure(
      locateBrowser({ env: { PATH: '/usr/local/bin' }, platform: 'linux', isFile: noFiles, bundled: nothingBundled }),
    );
    expect(message).toContain('npm install');
    expect(message).toContain('apt-get install chromium');
    expect(message).toContain(`${BROWSER_ENV}=`);
  });

  it('a browser that does not start is one line too, naming it', async () => {
    const message = await oneLineFailure(
      launchBrowser({ env: { [BROWSER_ENV]: '/bin/false' }, bundled: nothingBundled }),
    );
    expect(message).toContain('/bin/false');
    expect(message).toContain(`${BROWSER_ENV}=`);
  }, 60_000);
});

describe.runIf(process.platform === 'linux' && process.arch === 'x64')('the Chromium that npm install brings', () => {
  it('starts with no system browser and opens a page', async () => {
    const { browser, choice } = await launchBrowser({ env: {}, isFile: noFiles });
    try {
      expect(choice.source).toMatch(/^@sparticuz\/chromium /);
      const page = await browser.newPage();
      await page.setContent('<svg><rect width="4" height="4"/><rect width="2" height="2"/></svg>');
      expect(await page.$$eval('rect', (r) => r.length)).toBe(2);
      // A second page after closing the first: a browser run in one process would have ended with it.
      await page.close();
      const again = await browser.newPage();
      await again.close();
    } finally {
      await browser.close();
    }
  }, 120_000);

  it(`starts from ${BROWSER_ENV} too, even as a wrapper script`, async () => {
    const bundled = (await bundledChromium())!;
    // A wrapper, so that this runs on a machine without NSS as well (the bundled libraries stand in).
    const wrapper = path.join(mkdtempSync(path.join(os.tmpdir(), 'rungchain-browser-')), 'chrome');
    writeFileSync(
      wrapper,
      `#!/bin/sh\nLD_LIBRARY_PATH="$LD_LIBRARY_PATH:${bundled.libraryPath}" exec "${bundled.executablePath}" "$@"\n`,
      { mode: 0o755 },
    );
    const { browser, choice } = await launchBrowser({ env: { [BROWSER_ENV]: wrapper }, bundled: nothingBundled });
    expect(choice.source).toBe(BROWSER_ENV);
    expect(browser.version()).toMatch(/^\d+\./);
    await browser.close();
  }, 120_000);
});
