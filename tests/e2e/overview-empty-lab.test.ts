// A lab's first day with the overview left open (FRINGEWISE_SEED=0, a database of its own): the
// note that there are no benches gives way, without a reload, to the card of the first bench an
// admin makes, and the card follows its gateway coming online.
import type { MqttClient } from 'mqtt';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { createUser } from '../../src/lib/server/users.ts';
import { startApp, type RunningApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { islandsHydrated, launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { connectGateway } from '../helpers/live-path.ts';
import { TEST_PASSWORD } from '../helpers/web-app.ts';

const BENCH = 'mz-852';
const GW = 'gw-852';
let db: FreshDatabase;
let app: RunningApp;
let admin: Browser;
let gateway: MqttClient | null = null;

beforeAll(async () => {
  db = await useFreshDatabase('emptylab');
  delete process.env['SMTP_URL'];
  app = await startApp({ port: 0, host: '127.0.0.1', seed: false, simulate: false, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  await createUser({ email: 'admin@empty.example', role: 'admin', password: TEST_PASSWORD });
  admin = await launchBrowser({ width: 1280, height: 900 });
  await signIn(admin.page, app.url, 'admin@empty.example', TEST_PASSWORD);
});

afterAll(async () => {
  await gateway?.endAsync();
  await admin?.close();
  await app?.close();
  await db?.restore();
});

describe('overview of an empty lab', () => {
  it("shows the lab's first bench once it is made, and its gateway coming online", async () => {
    const page = admin.page;
    await page.goto(`${app.url}/`);
    await islandsHydrated(page);
    const note = page.getByTestId('no-benches');
    expect(await note.textContent()).toContain("No benches yet. Create the lab's first one under Benches & gateways");
    expect(await note.getByRole('link', { name: 'Benches & gateways' }).getAttribute('href')).toBe('/admin/benches');

    await createBench({ id: BENCH, name: 'Caesium MZ', wavelengthNm: 852 });
    const { token } = await createGateway(GW, BENCH);
    await expect.poll(() => page.getByTestId(`bench-card-${BENCH}`).count(), { timeout: 15_000 }).toBe(1);
    expect(await note.count()).toBe(0);
    const badge = page.getByTestId(`bench-gateways-${BENCH}`);
    expect(await badge.textContent()).toBe('not connected yet');

    gateway = await connectGateway(app.mqttPort!, GW, token);
    await gateway.publishAsync(topicFor(GW, 'status'), JSON.stringify({ v: 1, state: 'online' }), { qos: 1, retain: true });
    await expect.poll(() => badge.textContent(), { timeout: 15_000 }).toBe('online 1/1');
  });
});
