// A lab's first day, without the demo (FRINGEWISE_SEED=0): what the pages say before there is
// anything to show. The admin's empty overview leads to where benches are made; a bench with no
// gateway, or with one that has never connected, says so instead of "offline" or "waiting for
// counts"; and a gateway's new token comes with the command that starts it against this broker.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApiToken } from '../../src/lib/server/auth/api-tokens.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { createUser } from '../../src/lib/server/users.ts';
import { startApp, type RunningApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { HttpClient, inputValue } from '../helpers/http-client.ts';
import { TEST_PASSWORD } from '../helpers/web-app.ts';

const BENCH = 'mz-780';
const GW = 'gw-780';
let db: FreshDatabase;
let app: RunningApp;
let admin: HttpClient;
let observerToken: string;

beforeAll(async () => {
  db = await useFreshDatabase('firstday');
  delete process.env['SMTP_URL'];
  app = await startApp({ port: 0, host: '127.0.0.1', seed: false, simulate: false, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  await createUser({ email: 'admin@first.example', role: 'admin', password: TEST_PASSWORD });
  const observer = await createUser({ email: 'observer@first.example', role: 'observer', password: TEST_PASSWORD });
  observerToken = (await createApiToken(observer.id, 'test')).token;
  admin = new HttpClient(app.url);
  expect((await admin.signIn('admin@first.example', TEST_PASSWORD)).status).toBe(303);
});

afterAll(async () => {
  await app?.close();
  await db?.restore();
});

/** A page as text, without the comments React puts between the text nodes it renders. */
const text = (html: string) => html.replaceAll('<!-- -->', '');
const asObserver = async (path: string) => text(await (await fetch(new URL(path, app.url), { headers: { authorization: `Bearer ${observerToken}` } })).text());
const asAdmin = async (path: string) => text((await admin.get(path)).text);

describe("a lab's first day", () => {
  it("leads the admin from the empty overview to where benches are made; others are told who does it", async () => {
    expect(await asAdmin('/')).toMatch(/No benches yet\. Create the lab(?:'|&#39;|&#x27;)s first one under <a[^>]*href="\/admin\/benches"/);
    expect(await asObserver('/')).toContain('No benches yet. An admin adds them under Benches &amp; gateways.');
  });

  it('says a new bench has no gateway, on the overview and on its page', async () => {
    await createBench({ id: BENCH, name: 'Rubidium MZ', wavelengthNm: 780.2 });
    const home = await asAdmin('/');
    expect(home).toMatch(/data-testid="bench-gateways-mz-780"[^>]*>no gateway yet</);
    expect(home).not.toContain('offline');
    const page = await asAdmin(`/benches/${BENCH}`);
    expect(page).toContain('Nothing can arrive here yet: this bench has no gateway.');
    expect(page).toContain(`href="/admin/benches/${BENCH}"`);
    expect(await asObserver(`/benches/${BENCH}`)).toContain('An admin adds one under Benches &amp; gateways.');
  });

  it("hands a new gateway's token over with the command that starts it against this broker", async () => {
    const res = await admin.postForm(`/admin/benches/${BENCH}`, { intent: 'gateway-add', gatewayId: GW });
    expect(res.status).toBe(200);
    const token = inputValue(res.text, 'gw-token');
    expect(token).toMatch(/^fwg_/);
    expect(res.text).toContain(`FRINGEWISE_GATEWAY_TOKEN=${token} npm run gateway -- --id ${GW} --url mqtt://127.0.0.1:${app.mqttPort} --driver serial --device /dev/ttyACM0`);
    // The default broker address is this machine's loopback: a gateway elsewhere is told what to change.
    expect(res.text).toContain('The broker listens on this computer only (MQTT_HOST is 127.0.0.1)');
  });

  it('calls a gateway that has never connected "not connected yet", not offline', async () => {
    // Made here through the module too: the page's form is covered above.
    await createGateway(`${GW}-b`, BENCH);
    expect(await asAdmin('/')).toMatch(/data-testid="bench-gateways-mz-780"[^>]*>not connected yet</);
    const page = await asAdmin(`/benches/${BENCH}`);
    expect(page).toContain(`${GW} not connected yet`);
    expect(page).toContain(`${GW}, ${GW}-b have not connected yet.`);
    expect(page).toContain(`href="/benches/${BENCH}/gateways/${GW}"`);
    expect(page).not.toContain('No gateway of this bench is online');
  });
});
