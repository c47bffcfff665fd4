// Revoking a gateway drops a live bench at once, so the page asks first: in a browser the admin
// sees the question in a dialog, Cancel (which has the focus) changes nothing, and going ahead
// revokes; with scripts turned off the same question comes from the server as a step of its own.
// Screenshots of both go to test-results/.
import { mkdirSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createBench, createGateway, verifyGatewayToken } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const SHOTS = 'test-results';
const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `cf-${tag}`;
const QUESTION = (gw: string) => `Revoke ${gw}?`;
const DETAIL = 'The gateway is disconnected at once and its token stops working.';

let app: RunningApp;
let withScripts: Browser;
let without: Browser;

beforeAll(async () => {
  mkdirSync(SHOTS, { recursive: true });
  app = await startWebApp();
  await createBench({ id: BENCH, name: `Confirm bench ${tag}`, wavelengthNm: 1550 });
  withScripts = await launchBrowser();
  without = await launchBrowser({ javaScriptEnabled: false });
  for (const b of [withScripts, without]) await signIn(b.page, app.url, 'admin@lab.example', 'demo-admin-pass');
});
afterAll(async () => {
  await withScripts?.close();
  await without?.close();
  await app?.close();
});

describe('revoking a gateway', () => {
  it('asks in a dialog; Cancel keeps the gateway, going ahead revokes it', async () => {
    const gw = `${BENCH}-js`;
    const { token } = await createGateway(gw, BENCH);
    const page = withScripts.page;
    await page.goto(`${app.url}/admin/benches/${BENCH}`);

    await page.getByRole('button', { name: `Revoke ${gw}` }).click();
    const dialog = page.getByRole('dialog', { name: QUESTION(gw) });
    await dialog.waitFor();
    expect(await dialog.textContent()).toContain(DETAIL);
    // Cancel has the focus: Enter on an opened dialog does no harm.
    expect(await page.evaluate(() => document.activeElement?.textContent)).toBe('Cancel');
    await page.screenshot({ path: `${SHOTS}/confirm-revoke-dialog.png` });
    await dialog.getByRole('button', { name: 'Cancel' }).click();
    await dialog.waitFor({ state: 'detached' });
    expect(await verifyGatewayToken(gw, token)).toEqual({ benchId: BENCH });

    // Escape is a Cancel too.
    await page.getByRole('button', { name: `Revoke ${gw}` }).click();
    await dialog.waitFor();
    await page.keyboard.press('Escape');
    await dialog.waitFor({ state: 'detached' });
    expect(await verifyGatewayToken(gw, token)).toEqual({ benchId: BENCH });

    await page.getByRole('button', { name: `Revoke ${gw}` }).click();
    await dialog.getByRole('button', { name: `Revoke ${gw}` }).click();
    await page.getByRole('status').filter({ hasText: `Gateway ${gw} revoked` }).waitFor();
    expect(await verifyGatewayToken(gw, token)).toBeNull();
  });

  it('without scripts, the server asks in a step of its own before revoking', async () => {
    const gw = `${BENCH}-nojs`;
    const { token } = await createGateway(gw, BENCH);
    const page = without.page;
    await page.goto(`${app.url}/admin/benches/${BENCH}`);

    await page.getByRole('button', { name: `Revoke ${gw}` }).click();
    const step = page.getByRole('alertdialog', { name: QUESTION(gw) });
    await step.waitFor();
    expect(await step.textContent()).toContain(DETAIL);
    expect(await verifyGatewayToken(gw, token)).toEqual({ benchId: BENCH });
    await page.screenshot({ path: `${SHOTS}/confirm-revoke-step.png` });

    await step.getByRole('link', { name: 'Cancel' }).click();
    await step.waitFor({ state: 'detached' });
    expect(await verifyGatewayToken(gw, token)).toEqual({ benchId: BENCH });

    await page.getByRole('button', { name: `Revoke ${gw}` }).click();
    await step.getByRole('button', { name: `Revoke ${gw}` }).click();
    await page.getByRole('status').filter({ hasText: `Gateway ${gw} revoked` }).waitFor();
    expect(await verifyGatewayToken(gw, token)).toBeNull();
  });
});
