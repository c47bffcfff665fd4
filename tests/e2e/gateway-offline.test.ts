// A bench page and the lab overview left open while a gateway goes away: an admin revokes the fibre
// bench's gateway, whose last will says offline. Without a reload the bench header shows it offline
// and the live figures are greyed with their age, and the overview's card for the bench turns
// offline while the others stay online; when a gateway announces itself online again both follow,
// and the figures, with no counts since, still say how old they are. The overview hears of it on
// one status-only socket for every bench the observer may read. Screenshots go to test-results/.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { MqttClient } from 'mqtt';
import { DEMO_BENCHES, findDemoBench } from '../../simulators/demo-benches.ts';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { revokeGateway, rotateGatewayToken } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { launchBrowser, screenshotBothThemes, signIn, type Browser } from '../helpers/browser.ts';
import { connectGateway } from '../helpers/live-path.ts';
import { startWebApp } from '../helpers/web-app.ts';

const BENCH = 'mz-1550';
const GW = findDemoBench(BENCH)!.gateway;

let app: RunningApp;
let observer: Browser;
let gateway: MqttClient | null = null;
let revoked = false;

beforeAll(async () => {
  app = await startWebApp({ simulate: true });
  observer = await launchBrowser({ width: 1440, height: 900 });
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  if (gateway) {
    // Offline again before leaving (a clean disconnect sends no last will), so the stored status is true.
    await gateway.publishAsync(topicFor(GW, 'status'), JSON.stringify({ v: 1, state: 'offline' }), { qos: 1, retain: true });
    await gateway.endAsync();
  }
  // A working token again: the next start's demo seed sees it does not match its file and issues the simulator one.
  if (revoked) await rotateGatewayToken(GW);
  await observer?.close();
  await app?.close();
});

describe('bench page and overview when the gateway goes away', () => {
  it('shows the gateway offline and the figures stale without a reload, and follows it back online', async () => {
    const overview = await observer.context.newPage();
    const overviewSockets: string[] = [];
    overview.on('websocket', (ws) => overviewSockets.push(new URL(ws.url()).search));
    await overview.goto(`${app.url}/`);
    const badge = overview.getByTestId(`bench-gateways-${BENCH}`);
    const otherBadges = DEMO_BENCHES.filter((b) => b.id !== BENCH).map((b) => overview.getByTestId(`bench-gateways-${b.id}`));
    await expect.poll(() => badge.textContent(), { timeout: 30_000 }).toBe('online 1/1');
    for (const other of otherBadges) await expect.poll(() => other.textContent(), { timeout: 30_000 }).toBe('online 1/1');
    await overview.evaluate(() => document.documentElement.setAttribute('data-e2e-same-page', '1'));

    const page = observer.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    const status = page.getByTestId('gateway-status');
    await expect.poll(() => status.textContent(), { timeout: 30_000 }).toContain(`${GW} online`);
    await page.waitForFunction(() => /\d/.test(document.querySelector('[data-testid="rate-a"]')?.textContent ?? ''), null, { timeout: 30_000 });
    expect(await page.getByTestId('figures-stale').count()).toBe(0);
    // Marks this document: a reload would lose it.
    await page.evaluate(() => document.documentElement.setAttribute('data-e2e-same-page', '1'));

    await revokeGateway(GW);
    revoked = true;
    await expect.poll(() => status.textContent(), { timeout: 10_000 }).toContain(`${GW} offline`);
    await expect.poll(() => badge.textContent(), { timeout: 10_000 }).toBe('offline 0/1');
    for (const other of otherBadges) expect(await other.textContent()).toBe('online 1/1');
    // Its figures stop with it: the card says how old they are.
    await expect.poll(() => overview.getByTestId(`bench-stale-${BENCH}`).textContent(), { timeout: 10_000 }).toMatch(/^No gateway online: figures are \d+ s old\.$/);
    await screenshotBothThemes(overview, 'overview-gateway-revoked');
    const notice = page.getByTestId('figures-stale');
    await expect.poll(() => notice.textContent(), { timeout: 5_000 }).toMatch(/No gateway of this bench is online: .* are \d+ s old\./);
    expect(await page.locator('section[aria-label="Live figures"] [data-stale="true"]').count()).toBe(1);
    expect(await page.getByRole('region', { name: /Photon statistics/ }).textContent()).toContain('gateway offline');
    // The age counts on with nothing arriving.
    const age = async () => Number(/are (\d+) s old/.exec((await notice.textContent()) ?? '')?.[1] ?? NaN);
    const first = await age();
    await expect.poll(age, { timeout: 5_000 }).toBeGreaterThan(first);
    await screenshotBothThemes(page, 'bench-gateway-revoked');

    // Back with a new token: the gateway's retained status says online, and the header follows. No
    // counts have come since, so the figures stay stale, now for their age alone.
    const { token } = await rotateGatewayToken(GW);
    revoked = false;
    gateway = await connectGateway(app.mqttPort!, GW, token);
    await gateway.publishAsync(topicFor(GW, 'status'), JSON.stringify({ v: 1, state: 'online', boot: 'e2e' }), { qos: 1, retain: true });
    await expect.poll(() => status.textContent(), { timeout: 10_000 }).toContain(`${GW} online`);
    await expect.poll(() => badge.textContent(), { timeout: 10_000 }).toBe('online 1/1');
    await expect.poll(() => notice.textContent(), { timeout: 15_000 }).toMatch(/^Figures are \d+ s old: no newer counts have arrived\.$/);
    expect(await page.evaluate(() => document.documentElement.getAttribute('data-e2e-same-page'))).toBe('1');
    expect(await overview.evaluate(() => document.documentElement.getAttribute('data-e2e-same-page'))).toBe('1');
    // One status-only socket for every bench the observer may read, however many, no bench's stream of counts.
    expect(overviewSockets).toHaveLength(1);
    const watched = new URLSearchParams(overviewSockets[0]);
    expect(watched.get('watch')).toBe('status');
    expect(watched.get('all')).toBe('1');
    expect(watched.getAll('bench')).toEqual([]);
  });
});
