// The live page's layout where it matters for safety and reach, in a real browser against the demo
// simulators: an operator who has scrolled anywhere on the page can still stop a running sweep
// from the pinned drive strip, through the same command path as the Drive card; the laser caution
// stays beside Start sweep; an observer on a phone sees that they are read-only, gets no Stop, and
// reaches every page through the header's menu, by keyboard too. Screenshots go to test-results/.
import { mkdirSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Locator, Page } from 'playwright-core';
import type { RunningApp } from '../../src/server/app.ts';
import { islandsHydrated, launchBrowser, SCREENSHOT_DIR, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const BENCH = 'mz-633';
const DESKTOP = { width: 1440, height: 900 };
const PHONE = { width: 390, height: 844 };

let app: RunningApp;
let operator: Browser;
let observer: Browser;

beforeAll(async () => {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  app = await startWebApp({ simulate: true });
  operator = await launchBrowser(DESKTOP);
  observer = await launchBrowser(PHONE);
  await signIn(operator.page, app.url, 'operator@lab.example', 'demo-operator-pass');
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  await operator?.close();
  await observer?.close();
  await app?.close();
});

/** The element lies wholly inside the viewport as it is scrolled now. */
async function inView(page: Page, el: Locator): Promise<boolean> {
  const box = await el.boundingBox();
  const vp = page.viewportSize()!;
  return box !== null && box.y >= 0 && box.x >= 0 && box.y + box.height <= vp.height && box.x + box.width <= vp.width;
}

async function shot(page: Page, name: string): Promise<void> {
  await page.screenshot({ path: path.join(SCREENSHOT_DIR, `${name}.png`) });
}

describe('bench page layout', () => {
  it('keeps the Stop within reach of an operator wherever the page is scrolled while the drive sweeps', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    // The sweep form is typed into below: React must own its inputs first.
    await islandsHydrated(page);
    const strip = page.getByRole('region', { name: 'Drive status' });
    const stop = strip.getByRole('button', { name: 'Stop drive' });
    await stop.waitFor();
    // On the first screen, with the tiles and the fringes.
    expect(await inView(page, stop)).toBe(true);
    expect(await page.getByTestId('role-badge').count()).toBe(0);
    expect(await page.getByRole('link', { name: 'Export & import' }).count()).toBe(1);

    // A sweep is started only in the Drive card, beside the laser and high-voltage caution.
    const card = page.locator('#drive');
    await card.getByLabel('From (V)', { exact: true }).fill('5');
    await card.getByLabel('To (V)', { exact: true }).fill('45');
    await card.getByLabel('Dwell (ms)', { exact: true }).fill('20');
    const form = card.locator('form', { has: page.getByRole('button', { name: 'Start sweep' }) });
    expect(await form.getByRole('note', { name: 'Laser safety' }).textContent()).toMatch(/high voltage can be lethal/i);
    expect(await strip.getByRole('button', { name: 'Start sweep' }).count()).toBe(0);
    await card.getByRole('button', { name: 'Start sweep' }).click();
    await expect.poll(() => page.getByTestId('drive-message').textContent()).toMatch(/^Sweep: accepted by gw-/);
    await expect.poll(() => strip.getByTestId('drive-strip-state').textContent(), { timeout: 10_000 }).toMatch(/moving (up|down) at \d+\.\d{3} V/);

    // Scrolled to the alarms at the bottom, the strip is still on screen with its Stop.
    await page.evaluate(() => window.scrollTo(0, document.documentElement.scrollHeight));
    await page.waitForTimeout(300);
    expect(await page.evaluate(() => window.scrollY)).toBeGreaterThan(300);
    expect(await inView(page, stop)).toBe(true);
    await shot(page, 'layout-operator-sweeping-scrolled');

    // The same command as the card's Stop: POST …/commands with op stop.
    const [req] = await Promise.all([page.waitForRequest((r) => r.method() === 'POST' && r.url().endsWith(`/api/v1/benches/${BENCH}/commands`)), stop.click()]);
    expect(req.postDataJSON()).toEqual({ op: 'stop' });
    await expect.poll(() => strip.getByTestId('drive-strip-message').textContent()).toMatch(/^Stop: accepted by gw-/);
    await expect.poll(() => strip.getByTestId('drive-strip-state').textContent(), { timeout: 10_000 }).toMatch(/holding at \d+\.\d{3} V/);
  });

  it('shows an observer on a phone that they are read-only, with no Stop, and only export', async () => {
    const page = observer.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    const badge = page.getByTestId('role-badge');
    expect(await badge.textContent()).toMatch(/read-only.*observer/i);
    expect(await inView(page, badge)).toBe(true);
    const strip = page.getByRole('region', { name: 'Drive status' });
    await expect.poll(() => strip.getByTestId('drive-strip-state').textContent(), { timeout: 10_000 }).toMatch(/(holding|moving (up|down)) at \d+\.\d{3} V/);
    expect(await page.getByRole('button', { name: 'Stop drive' }).count()).toBe(0);
    await shot(page, 'layout-observer-phone');

    await page.getByRole('link', { name: 'Export', exact: true }).click();
    await page.waitForURL(/\/import$/);
    expect(await page.getByRole('heading', { level: 1 }).textContent()).toBe('Export');
    expect(await page.getByTestId('export-only').textContent()).toContain('needs the operator role');
    expect(await page.getByRole('button', { name: 'Check file' }).count()).toBe(0);
  });

  it('opens the same links from a menu on a phone, by keyboard', async () => {
    const page = observer.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    // The rail is not shown at this width; the menu is the way around.
    expect(await page.getByRole('link', { name: 'Runs & notes' }).count()).toBe(0);
    const button = page.getByRole('button', { name: 'Menu' });
    expect(await button.getAttribute('aria-expanded')).toBe('false');
    const panel = page.locator(`#${(await button.getAttribute('aria-controls'))!}`);
    expect(await panel.isVisible()).toBe(false);

    // Tab from the top of the page: the logo, then the menu button.
    await page.keyboard.press('Tab');
    await page.keyboard.press('Tab');
    expect(await page.evaluate(() => document.activeElement?.id)).toBe('menu-button');
    await page.keyboard.press('Enter');
    expect(await button.getAttribute('aria-expanded')).toBe('true');
    const menu = page.getByRole('navigation', { name: 'Main' });
    for (const name of ['Lab overview', 'Runs & notes', 'Attenuated HeNe MZ, 633 nm', 'Heralded MZ, 810 nm']) {
      expect(await menu.getByRole('link', { name }).isVisible(), name).toBe(true);
    }
    for (const name of ['Sign out', 'Switch light or dark theme']) expect(await menu.getByRole('button', { name }).isVisible(), name).toBe(true);
    // An observer is offered no administration.
    expect(await menu.getByRole('link', { name: 'People' }).count()).toBe(0);
    await shot(page, 'layout-observer-phone-menu');

    // The theme switch in the menu works like the rail's.
    const theme = await page.evaluate(() => document.documentElement.dataset['theme']);
    await menu.getByRole('button', { name: 'Switch light or dark theme' }).click();
    expect(await page.evaluate(() => document.documentElement.dataset['theme'])).not.toBe(theme);

    // Escape closes it and gives the focus back to the button.
    await page.keyboard.press('Escape');
    expect(await button.getAttribute('aria-expanded')).toBe('false');
    expect(await panel.isVisible()).toBe(false);
    expect(await page.evaluate(() => document.activeElement?.id)).toBe('menu-button');

    await page.keyboard.press('Enter');
    await Promise.all([page.waitForURL(`${app.url}/runs`), menu.getByRole('link', { name: 'Runs & notes' }).click()]);
    expect(await page.getByRole('heading', { level: 1 }).count()).toBe(1);
  });

  it('shows no menu button beside the rail on a wide screen', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/runs`);
    expect(await page.getByRole('button', { name: 'Menu' }).count()).toBe(0);
    expect(await page.getByRole('navigation', { name: 'Main' }).getByRole('button', { name: 'Sign out' }).isVisible()).toBe(true);
  });
});
