// The lab overview left open while an admin sets up a new bench: without a reload its card appears
// (found by the overview's 5 s read), and its gateway's presence, status and figures reach the card
// over the page's one status socket, which was opened before the bench existed.
import type { MqttClient } from 'mqtt';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { islandsHydrated, launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { connectGateway, makeBatch, publishBatch } from '../helpers/live-path.ts';
import { startWebApp } from '../helpers/web-app.ts';

const tag = `late-${process.pid.toString(36)}-${Date.now().toString(36).slice(-5)}`;
const BENCH = `${tag}-b`;
const GW = `${tag}-g`;
let app: RunningApp;
let observer: Browser;
let gateway: MqttClient | null = null;

beforeAll(async () => {
  app = await startWebApp();
  observer = await launchBrowser({ width: 1440, height: 900 });
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  if (gateway) {
    await gateway.publishAsync(topicFor(GW, 'status'), JSON.stringify({ v: 1, state: 'offline' }), { qos: 1, retain: true });
    await gateway.endAsync();
  }
  await observer?.close();
  await app?.close();
});

describe('overview and a bench made after it loaded', () => {
  it('shows the new bench and follows its gateway without a reload', async () => {
    const page = observer.page;
    // Off the overview that signing in landed on, whose socket may still be opening: counted here it
    // would be a second one.
    await page.goto(`${app.url}/account`);
    const sockets: string[] = [];
    const opened = new Promise<void>((resolve) =>
      page.on('websocket', (ws) => {
        sockets.push(new URL(ws.url()).search);
        ws.once('framereceived', () => resolve());
      }),
    );
    await page.goto(`${app.url}/`);
    await islandsHydrated(page);
    // The page's socket has its opening presence (the server has read its benches) before the bench exists.
    await opened;
    expect(await page.getByTestId(`bench-card-${BENCH}`).count()).toBe(0);

    await createBench({ id: BENCH, name: 'Late bench', wavelengthNm: 1310 });
    const { token } = await createGateway(GW, BENCH);
    // The next read (every 5 s) names it, and the page asks for its card.
    const card = page.getByTestId(`bench-card-${BENCH}`);
    await expect.poll(() => card.count(), { timeout: 15_000 }).toBe(1);
    expect(await card.getByRole('link', { name: 'Late bench' }).count()).toBe(1);
    const badge = page.getByTestId(`bench-gateways-${BENCH}`);
    expect(await badge.textContent()).toBe('not connected yet');

    gateway = await connectGateway(app.mqttPort!, GW, token);
    await gateway.publishAsync(topicFor(GW, 'status'), JSON.stringify({ v: 1, state: 'online', channels: ['a', 'b'] }), { qos: 1, retain: true });
    await expect.poll(() => badge.textContent(), { timeout: 15_000 }).toBe('online 1/1');
    // Counts arriving make the analysis publish the bench's figures, which the card shows.
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 2000;
    for (let i = 0; i < 3; i++) await publishBatch(gateway, GW, makeBatch(t0 + i * 1000, 100, i));
    await expect.poll(() => page.getByTestId(`bench-rate-a-${BENCH}`).textContent(), { timeout: 15_000 }).toMatch(/\d/);
    // All on the socket the page opened with: no reload, no second socket.
    expect(sockets).toEqual(['?watch=status&all=1']);
  });
});
