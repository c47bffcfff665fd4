// A lab's own bench whose gateway reads a microcontroller counter over the serial line protocol:
// counts arrive, but the gateway has no piezo drive, so it refuses a sweep or a hold. The operator
// must read that refusal, with the gateway's reason, beside the Drive card, not "sent". The admin
// page's gateway list stays usable on a phone: its actions scroll into view, never cut off.
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { PassThrough } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SerialCounter } from '../../gateway/drivers/serial.ts';
import { Gateway } from '../../gateway/gateway.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { launchBrowser, screenshotBothThemes, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const tag = Date.now().toString(36).slice(-6);
const BENCH = `ser-${tag}`;
const GW = `ser-${tag}-gw`;
const DT = 10; // ms per bin

let app: RunningApp;
let gateway: Gateway;
let queueDir: string;
let feeding: NodeJS.Timeout;
const line = new PassThrough();

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: `Serial counter ${tag}`, wavelengthNm: 780 });
  const { token } = await createGateway(GW, BENCH);
  queueDir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-serial-gw-'));
  // The counter announces its columns, then one line per 10 ms bin on its own clock, in real time.
  line.write(`HELLO v=1 dt=${DT} cols=t,a,b\n`);
  let t = 0;
  feeding = setInterval(() => {
    const lines = Array.from({ length: 10 }, () => `${(t += DT)} ${300 + (t % 7)} ${280 + (t % 5)}\n`);
    line.write(lines.join(''));
  }, 100);
  gateway = await Gateway.start({ id: GW, token, url: `mqtt://127.0.0.1:${app.mqttPort}`, counter: new SerialCounter({ stream: line, batchMs: 100 }), driver: 'serial', queueDir });
});

afterAll(async () => {
  clearInterval(feeding);
  await gateway?.stop();
  await app?.close();
  rmSync(queueDir, { recursive: true, force: true });
});

describe('a gateway without a drive', () => {
  it("shows its counts, and the operator reads its refusal of a sweep and a hold", async () => {
    const b: Browser = await launchBrowser({ width: 1440, height: 900 });
    try {
      const page = b.page;
      await signIn(page, app.url, 'operator@lab.example', 'demo-operator-pass');
      await page.goto(`${app.url}/benches/${BENCH}`);
      await page.waitForFunction(() => /\d/.test(document.querySelector('[data-testid="rate-a"]')?.textContent ?? ''), null, { timeout: 30_000 });
      await page.getByRole('button', { name: 'Start sweep' }).click();
      await expect.poll(() => page.getByTestId('drive-message').textContent(), { timeout: 10_000 }).toBe(`Sweep refused by ${GW}: this gateway has no scan drive.`);
      await page.getByRole('button', { name: 'Hold', exact: true }).click();
      await expect.poll(() => page.getByTestId('drive-message').textContent(), { timeout: 10_000 }).toBe(`Hold at 50 V refused by ${GW}: this gateway has no scan drive.`);
      await screenshotBothThemes(page, 'bench-gateway-without-drive');
    } finally {
      await b.close();
    }
  });

  it("keeps the gateway list's actions reachable on a phone", async () => {
    const b: Browser = await launchBrowser({ width: 390, height: 844 });
    try {
      const page = b.page;
      await signIn(page, app.url, 'admin@lab.example', 'demo-admin-pass');
      await page.goto(`${app.url}/admin/benches/${BENCH}`);
      const revoke = page.getByRole('button', { name: `Revoke ${GW}` });
      await revoke.scrollIntoViewIfNeeded();
      const box = await revoke.boundingBox();
      expect(box).not.toBeNull();
      expect(box!.x + box!.width).toBeLessThanOrEqual(390);
      expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
    } finally {
      await b.close();
    }
  });
});
