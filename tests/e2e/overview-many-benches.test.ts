// The lab overview on a lab of many benches: it once polled three requests per bench, which held
// the browser's six connections per host, so its own scripts and fonts waited and a CI run timed
// out waiting for its load event. Now it loads within playwright's default wait, shows the demo
// benches' figures without asking for them, and its requests do not grow with the benches.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_BENCHES } from '../../simulators/demo-benches.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const MANY = 150;
const tag = `many-${process.pid}`;
/** What the page may ask in 10 s: the overview read on opening and every 5 s after (3), and one to spare. */
const MAX_API_REQUESTS = 4;
let app: RunningApp;
let observer: Browser;

beforeAll(async () => {
  app = await startWebApp({ simulate: true });
  for (let i = 0; i < MANY; i++) await createBench({ id: `${tag}-${i}`, name: `Many ${i}`, wavelengthNm: 810 });
  observer = await launchBrowser({ width: 1440, height: 900 });
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  await observer?.close();
  await app?.close();
});

describe('overview with many benches', () => {
  it('loads within the default wait and asks a bounded number of requests however many benches there are', async () => {
    const page = observer.page;
    // Off the overview that signing in landed on, whose socket may still be opening: counted here it
    // would be a second one.
    await page.goto(`${app.url}/account`);
    const api: string[] = [];
    page.on('request', (r) => {
      const url = new URL(r.url());
      if (url.pathname.startsWith('/api/') && r.resourceType() !== 'websocket') api.push(url.pathname);
    });
    const sockets: string[] = [];
    page.on('websocket', (ws) => sockets.push(new URL(ws.url()).search));
    // playwright's default timeout, waiting for the load event.
    await page.goto(`${app.url}/`);
    const startedAt = Date.now();
    expect(await page.getByTestId(`bench-card-${tag}-${MANY - 1}`).count()).toBe(1);
    // The demo benches' figures come with the page and then over the socket, never asked for bench by bench.
    const demo = DEMO_BENCHES[0]!.id;
    await expect.poll(() => page.getByTestId(`bench-gateways-${demo}`).textContent(), { timeout: 30_000 }).toBe('online 1/1');
    const rate = page.getByTestId(`bench-rate-a-${demo}`);
    await expect.poll(() => rate.textContent(), { timeout: 30_000 }).toMatch(/\d/);
    // And they move on: a later message, not only the render's.
    const first = await rate.textContent();
    await expect.poll(() => rate.textContent(), { timeout: 10_000 }).not.toBe(first);
    await page.waitForTimeout(Math.max(0, 10_000 - (Date.now() - startedAt)));
    // Benches other test files make meanwhile on the shared database get their cards read, at most
    // once per overview read: never a request per bench shown.
    const reads = api.filter((p) => p === '/api/v1/overview');
    const cards = api.filter((p) => p === '/api/v1/overview/benches');
    expect(reads.length + cards.length, api.join(' ')).toBe(api.length);
    expect(reads.length).toBeGreaterThan(0);
    expect(reads.length).toBeLessThanOrEqual(MAX_API_REQUESTS);
    expect(cards.length).toBeLessThanOrEqual(reads.length);
    expect(sockets).toEqual(['?watch=status&all=1']);
  });
});
