// Browser helpers for the e2e tests and the live-view benchmark: Debian's chromium through
// playwright-core (never a downloaded browser), a persistent context in a temp folder (see
// stack-notes trap 7), sign-in through the real form, and screenshots in both themes.
import { mkdtempSync, mkdirSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const SCREENSHOT_DIR = path.resolve('test-results');

export interface Browser {
  context: BrowserContext;
  page: Page;
  close(): Promise<void>;
}

export async function openBrowser(opts: { width?: number; height?: number; init?: string } = {}): Promise<Browser> {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-chromium-'));
  const context = await chromium.launchPersistentContext(dir, {
    executablePath: '/usr/bin/chromium',
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    viewport: { width: opts.width ?? 1440, height: opts.height ?? 1000 },
  });
  if (opts.init) await context.addInitScript(opts.init);
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    context,
    page,
    close: async () => {
      await context.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export async function signIn(page: Page, baseUrl: string, email: string, password: string): Promise<void> {
  await page.goto(`${baseUrl}/signin`);
  await page.fill('#email', email);
  await page.fill('#password', password);
  await Promise.all([page.waitForURL((u) => !u.pathname.startsWith('/signin')), page.click('form button[type=submit]')]);
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
    // Two frames: the charts rebuild with the new palette on the event.
    await page.waitForTimeout(400);
    const file = path.join(SCREENSHOT_DIR, `${name}-${theme}.png`);
    await page.screenshot({ path: file, fullPage: true });
    out.push(file);
  }
  return out;
}
