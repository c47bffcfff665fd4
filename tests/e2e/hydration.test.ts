// Every page with an island hydrates onto the markup the server sent, for a reader in another time
// zone than the server's. A mismatch makes React throw the server's markup away and draw the
// island again (a flash, and for a moment no Stop button on the live page), so any error a page
// reports is a failure here. The live page is opened once more with its main island's script held
// back, so that the header's island has opened the bench's shared socket before it hydrates (what
// a slow machine did now and then, and what once broke hydration there).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningApp } from '../../src/server/app.ts';
import { insertRaised } from '../../src/lib/server/alarms/event-store.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { alarmRules } from '../../src/lib/server/db/schema.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import { islandsHydrated, launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

// A bench of this file's own with a raised alarm, whose times the banner and the lists show.
const BENCH = `hyd-${process.pid}`;
let app: RunningApp;
let admin: Browser;
const errors: string[] = [];

beforeAll(async () => {
  app = await startWebApp({ simulate: true });
  // Far from any server's zone: UTC+13:45 in summer, +12:45 in winter.
  admin = await launchBrowser({ width: 1440, height: 900, timezoneId: 'Pacific/Chatham' });
  admin.page.on('pageerror', (e) => errors.push(`${admin.page.url()}: ${e.message.slice(0, 300)}`));
  admin.page.on('console', (m) => {
    if (m.type() === 'error') errors.push(`${admin.page.url()}: ${m.text().slice(0, 300)}`);
  });
  await createBench({ id: BENCH, name: 'Hydration', wavelengthNm: 780 });
  const [rule] = await getDb().insert(alarmRules).values({ benchId: BENCH, name: 'Rate above 5 Mc/s', metric: 'rate_high', threshold: 5e6, clearThreshold: 4e6 }).returning();
  await insertRaised({ ruleId: rule!.id, ruleName: rule!.name, metric: rule!.metric, benchId: BENCH, subject: 'gw/a', severity: 'warning', message: 'rate 6.1 Mc/s', value: 6.1e6, at: Date.now() - 3_600_000 });
  await signIn(admin.page, app.url, 'admin@lab.example', 'demo-admin-pass');
});

afterAll(async () => {
  await admin?.close();
  await app?.close();
});

async function visit(pathname: string): Promise<void> {
  await admin.page.goto(app.url + pathname);
  // On a loaded machine hydration can come seconds after the load event: waited for, not timed.
  await islandsHydrated(admin.page);
  // A mismatch is reported while React finishes hydrating, and the first live messages re-render
  // the islands: a quiet second after hydration in which any error shows.
  await admin.page.waitForTimeout(1000);
}

describe('hydration', () => {
  it('reports no error on any page with an island', async () => {
    const runs = (await (await admin.page.request.get(`${app.url}/api/v1/benches/mz-633/runs`)).json()) as { id: number }[];
    expect(runs.length).toBeGreaterThan(0);
    const pages = [
      '/',
      '/benches/mz-633',
      '/benches/mz-1550',
      `/benches/${BENCH}`,
      '/benches/mz-633/history',
      '/benches/mz-633/import',
      '/runs',
      `/runs/${runs[0]!.id}`,
      '/account',
      '/admin/users',
      '/admin/alarms',
      '/admin/audit',
      '/admin/retention',
      '/admin/benches',
      '/admin/benches/mz-633',
      '/admin/outbox',
    ];
    for (const p of pages) await visit(p);
    expect(errors).toEqual([]);

    const held = '**/_astro/BenchLive.*.js';
    await admin.page.route(held, async (route) => {
      await new Promise((r) => setTimeout(r, 1500));
      await route.continue();
    });
    await visit('/benches/mz-633');
    await admin.page.unroute(held);
    expect(errors).toEqual([]);
    // The island did hydrate, onto an open socket: no "connecting" line left over once the
    // socket's first message is in (how soon depends on the machine, so polled).
    expect(await admin.page.getByRole('region', { name: 'Drive status' }).getByRole('button', { name: 'Stop drive' }).isVisible()).toBe(true);
    await expect.poll(() => admin.page.getByText('Connecting to the live feed…').count(), { timeout: 15_000 }).toBe(0);
  });
});
