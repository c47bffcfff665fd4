// The export form on a slow device: a range typed into the server's markup before the island
// hydrated is what the form keeps, and downloads; only an input left empty gets the default (the
// last hour, filled in once mounted since the server renders in its own time zone).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_ACCOUNTS } from '../../src/lib/server/seed.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { islandsHydrated, launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

let app: RunningApp;
let browser: Browser;

beforeAll(async () => {
  app = await startWebApp();
  browser = await launchBrowser({ width: 1280, height: 900 });
  const observer = DEMO_ACCOUNTS.find((a) => a.role === 'observer')!;
  await signIn(browser.page, app.url, observer.email, observer.password);
});
afterAll(async () => {
  await browser?.close();
  await app?.close();
});

describe('export range', () => {
  it('keeps a range typed before the island hydrated and fills only what was left empty', async () => {
    const page = browser.page;
    // The island's script is held back until the reader has typed.
    let release!: () => void;
    const typed = new Promise<void>((r) => (release = r));
    const held = '**/_astro/ExportRange.*.js';
    await page.route(held, async (route) => {
      await typed;
      await route.continue();
    });
    await page.goto(`${app.url}/benches/mz-633/import`);
    expect(await page.locator('astro-island[ssr] #exp-from').count()).toBe(1);
    await page.fill('#exp-from', '2026-03-01 09:30');
    release();
    await islandsHydrated(page);
    await page.unroute(held);
    // Mount has run once "To" holds its default; "From" still holds what was typed.
    await expect.poll(() => page.inputValue('#exp-to')).toMatch(/^\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}$/);
    expect(await page.inputValue('#exp-from')).toBe('2026-03-01 09:30');

    // And React holds it too: the download asks for the typed start, not the last hour.
    await page.fill('#exp-to', '2026-03-01 09:31');
    const download = page.waitForRequest((r) => r.url().includes('/export?'));
    await page.getByRole('button', { name: 'Download' }).click();
    const asked = new URL((await download).url());
    const from = Number(asked.searchParams.get('from'));
    const to = Number(asked.searchParams.get('to'));
    expect(to - from).toBe(60_000);
    expect(from).toBe(await page.evaluate(() => new Date(2026, 2, 1, 9, 30).getTime()));
  });
});
