// Live-view and history benchmark in a real browser against the real server:
//  1. A gateway publishes two outputs at 1 kHz bins (100-bin batches every 100 ms); the live view's
//     redraws are timed with the islands' performance measures ('fw-redraw:<chart>', enabled by
//     localStorage 'fw-perf'). Target: ≥ 10 redraws/s with < 8 ms of script per redraw.
//  2. 24 h of 1 s bins are stored for a fresh bench (through the real ingest, so rollups are
//     built), and the history page loads that range. Target: < 1 s.
// Run: `npx tsx tests/bench/live-view.bench.ts` (or `run()` from the bench runner).
import { pathToFileURL } from 'node:url';
import { startApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { connectGateway, freshGateway, makeBatch, publishBatch } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';
import { launchBrowser, signIn } from '../helpers/browser.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';
import { buildIfStale } from '../../src/server/build.ts';

/** Measured span of the live part, ms. */
const LIVE_MS = 10_000;
const DAY_MS = 86_400_000;

export async function run(): Promise<Record<string, number>> {
  process.env['ASTRO_TELEMETRY_DISABLED'] = '1';
  buildIfStale();
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  const app = await startApp({ port: 0, host: '127.0.0.1', seed: true, simulate: false, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  const browser = await launchBrowser({ width: 1440, height: 1000, init: "localStorage.setItem('fw-perf', '1')" });
  const result: Record<string, number> = {};
  try {
    const user = await userWithToken('operator', 'bench');
    await signIn(browser.page, app.url, user.email, user.password);

    // 1. Live view at 1 kHz bins.
    const live = await freshGateway();
    const gw = await connectGateway(app.mqttPort!, live.gatewayId, live.token);
    let seq = 0;
    let t = Math.floor(Date.now() / 100) * 100;
    const batch = (t0: number) => makeBatch(t0, 100, seq++, { dt: 1, value: (k, i) => (k === 'a' ? 30 + (i % 7) : 5 + (i % 3)) });
    await publishBatch(gw, live.gatewayId, batch(t));
    t += 100;
    await browser.page.goto(`${app.url}/benches/${live.benchId}`);
    await browser.page.waitForTimeout(1000);
    await browser.page.evaluate(() => performance.clearMeasures());
    const feed = setInterval(() => {
      void publishBatch(gw, live.gatewayId, batch(t));
      t += 100;
    }, 100);
    await browser.page.waitForTimeout(LIVE_MS);
    clearInterval(feed);
    const m = await browser.page.evaluate(() => performance.getEntriesByName('fw-redraw:rates').map((e) => e.duration));
    m.sort((a, b) => a - b);
    result['liveRedrawsPerS'] = m.length / (LIVE_MS / 1000);
    result['liveScriptMsMedian'] = m[Math.floor(m.length / 2)] ?? NaN;
    result['liveScriptMsP95'] = m[Math.floor(m.length * 0.95)] ?? NaN;
    await gw.endAsync();
    console.log('[live-view]', JSON.stringify(result));

    // 2. 24 h history: 24 batches of 3600 one-second bins.
    const hist = await freshGateway();
    const hg = await connectGateway(app.mqttPort!, hist.gatewayId, hist.token);
    const end = Math.floor(Date.now() / 1000) * 1000;
    for (let h = 0; h < 24; h++) {
      await publishBatch(hg, hist.gatewayId, makeBatch(end - DAY_MS + h * 3_600_000, 3600, h, { dt: 1000, boot: 'hist', value: (k, i) => (k === 'a' ? 20_000 + (i % 600) : 8_000 + (i % 300)) }));
    }
    await hg.endAsync();
    // Let the ingest's buffered insert land.
    await new Promise((r) => setTimeout(r, 2000));
    await browser.page.goto(`${app.url}/benches/${hist.benchId}/history`);
    await browser.page.getByTestId('history-range').waitFor();
    await browser.page.waitForFunction(() => /loaded in/.test(document.querySelector('[data-testid="history-range"]')?.textContent ?? ''));
    const started = Date.now();
    await browser.page.getByRole('button', { name: '24 h' }).click();
    await browser.page.waitForFunction(() => /step 2 min.*loaded in|step 120 s.*loaded in/.test(document.querySelector('[data-testid="history-range"]')?.textContent ?? ''), null, { timeout: 10_000 });
    result['history24hMs'] = Date.now() - started;
  } finally {
    await browser.close();
    await app.close();
    if (ownDb) await stopTestDb();
  }
  return result;
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  run().then(
    (r) => {
      console.log(JSON.stringify(r, null, 2));
      const ok = (r['liveRedrawsPerS'] ?? 0) >= 10 && (r['liveScriptMsMedian'] ?? Infinity) < 8 && (r['history24hMs'] ?? Infinity) < 1000;
      console.log(ok ? 'targets met' : 'targets NOT met');
      process.exit(0);
    },
    (err) => {
      console.error(err);
      process.exit(1);
    },
  );
}
