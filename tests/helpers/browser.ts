// Debian's chromium driven by playwright-core (never a downloaded browser), in a throwaway profile
// (stack-notes trap 7: a persistent context, since --user-data-dir is refused in launch args);
// sign-in through the real form, and screenshots in both themes for the e2e tests and benchmarks.
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const CHROMIUM = process.env['CHROMIUM_PATH'] ?? '/usr/bin/chromium';
export const SCREENSHOT_DIR = path.resolve('test-results');

export interface BrowserOptions {
  width?: number;
  height?: number;
  /** Script run in every page before its own (e.g. setting localStorage flags). */
  init?: string;
  /** IANA time zone the pages see (the machine's when unset). */
  timezoneId?: string;
  /** false: pages run no scripts, as for someone who turned them off (plain forms must still work). */
  javaScriptEnabled?: boolean;
}

export interface Browser {
  context: BrowserContext;
  /** The context's first tab. */
  page: Page;
  close(): Promise<void>;
}

export async function launchBrowser(opts: BrowserOptions = {}): Promise<Browser> {
  const profile = mkdtempSync(path.join(os.tmpdir(), 'fringewise-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    viewport: { width: opts.width ?? 1280, height: opts.height ?? 820 },
    ...(opts.timezoneId && { timezoneId: opts.timezoneId }),
    ...(opts.javaScriptEnabled === false && { javaScriptEnabled: false }),
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
  if (opts.init) await context.addInitScript(opts.init);
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    context,
    page,
    close: async () => {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

export async function signIn(page: Page, baseUrl: string, email: string, password: string): Promise<void> {
  await page.goto(`${baseUrl}/signin`);
  await page.fill('#email', email);
  await page.fill('#password', password);
  await Promise.all([page.waitForURL((u) => !u.pathname.startsWith('/signin')), page.click('form button[type=submit]')]);
}

/**
 * Waits until every island on the page has hydrated: Astro drops an island's ssr attribute once
 * its hydrator has run. An island's script loads after the load event (where goto returns), so on
 * a loaded machine a test that types or clicks at once reaches the server's markup, whose inputs
 * React does not read and whose buttons do nothing yet (or submit the plain form).
 */
export async function islandsHydrated(page: Page): Promise<void> {
  await page.waitForFunction(() => document.querySelector('astro-island[ssr]') === null, undefined, { timeout: 30_000 });
}

/** Full-page screenshots of the current page in both themes: test-results/<name>-<theme>.png. */
export async function screenshotBothThemes(page: Page, name: string): Promise<string[]> {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  const out: string[] = [];
  for (const theme of ['light', 'dark'] as const) {
    await page.evaluate((t) => {
      document.documentElement.dataset['theme'] = t;
      localStorage.setItem('fw-theme', t);
      window.dispatchEvent(new CustomEvent('fw-theme', { detail: t }));
    }, theme);
    // The charts rebuild with the new palette on the event; give them a few frames.
    await page.waitForTimeout(400);
    const file = path.join(SCREENSHOT_DIR, `${name}-${theme}.png`);
    await page.screenshot({ path: file, fullPage: true });
    out.push(file);
  }
  return out;
}
