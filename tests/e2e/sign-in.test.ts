// A person signs in with the demo admin account in a real browser and sees the lab's benches, in
// the light and the dark theme; screenshots go to test-results/ for a human look.
import { mkdirSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { DEMO_ACCOUNTS, DEMO_BENCH_ROWS } from '../../src/lib/server/seed.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { launchBrowser, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const SHOTS = 'test-results';
let app: RunningApp;
let browser: Browser;
let page: Page;

beforeAll(async () => {
  mkdirSync(SHOTS, { recursive: true });
  app = await startWebApp();
  browser = await launchBrowser();
  page = browser.page;
});
afterAll(async () => {
  await browser?.close();
  await app?.close();
});

async function setTheme(theme: 'light' | 'dark'): Promise<void> {
  await page.evaluate((t) => localStorage.setItem('fw-theme', t), theme);
  await page.reload();
  expect(await page.evaluate(() => document.documentElement.dataset['theme'])).toBe(theme);
}

describe('in a browser', () => {
  it('signs in and sees the bench list', async () => {
    const admin = DEMO_ACCOUNTS.find((a) => a.role === 'admin')!;
    await page.goto(app.url + '/');
    await page.waitForURL(/\/signin/);
    await page.getByLabel('E-mail').fill(admin.email);
    await page.getByLabel('Password').fill('a-wrong-password');
    await page.getByRole('button', { name: 'Sign in' }).click();
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('E-mail or password is not right');
    await page.screenshot({ path: `${SHOTS}/signin-error.png` });

    await page.getByLabel('Password').fill(admin.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(app.url + '/');
    const list = page.getByRole('list', { name: 'Benches' });
    for (const b of DEMO_BENCH_ROWS) await expect.poll(() => list.getByText(b.name, { exact: true }).count()).toBeGreaterThan(0);
    for (const theme of ['light', 'dark'] as const) {
      await setTheme(theme);
      await page.screenshot({ path: `${SHOTS}/overview-${theme}.png`, fullPage: true });
    }
  });

  it('shows the account and admin pages in both themes', async () => {
    for (const [name, path] of [
      ['account', '/account'],
      ['people', '/admin/users'],
      ['benches', '/admin/benches'],
      ['bench-edit', `/admin/benches/${DEMO_BENCH_ROWS[0]!.id}`],
      ['audit', '/admin/audit'],
      ['outbox', '/admin/outbox'],
    ] as const) {
      await page.goto(app.url + path);
      expect(await page.locator('h1').first().textContent()).toBeTruthy();
      for (const theme of ['light', 'dark'] as const) {
        await setTheme(theme);
        await page.screenshot({ path: `${SHOTS}/${name}-${theme}.png`, fullPage: true });
      }
    }
  });

  it('creates a personal API token that is shown once', async () => {
    await page.goto(app.url + '/account');
    await page.getByLabel('Label').fill('browser test');
    await page.getByRole('button', { name: 'Create token' }).click();
    const token = await page.locator('#new-token').inputValue();
    expect(token).toMatch(/^fwp_/);
    const res = await fetch(app.url + '/api/v1/benches', { headers: { authorization: `Bearer ${token}` } });
    expect(res.status).toBe(200);
    await page.goto(app.url + '/account');
    expect(await page.locator('#new-token').count()).toBe(0);
  });
});
