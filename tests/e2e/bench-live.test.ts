// The bench live view in a real browser against the real server and the demo simulators: an
// operator sweeps the heralded bench and sees the fit and a visibility consistent with the
// simulator's truth; an observer follows the same bench read-only, and a command forged from the
// observer's session is refused; screenshots of every screen in both themes go to test-results/.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startApp, type RunningApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { findDemoBench } from '../../simulators/demo-benches.ts';
import { openBrowser, screenshotBothThemes, signIn, type Browser } from './browser.ts';

const BENCH = 'mz-810';
// Gated on the herald, the outputs carry almost no dark counts (250/s × 2 ns × 2·10⁵ heralds/s
// ≈ 0.1/s) and < 0.1% dead-time loss at ≈ 36 kc/s, so the fitted raw visibility estimates the
// optics' visibility itself.
const TRUTH = findDemoBench(BENCH)!.model.optics.visibility;

let app: RunningApp;
let operator: Browser;
let observer: Browser;

beforeAll(async () => {
  delete process.env['SMTP_URL'];
  app = await startApp({ port: 0, host: '127.0.0.1', seed: true, simulate: true, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  operator = await openBrowser();
  observer = await openBrowser({ width: 1024, height: 1366 });
  await signIn(operator.page, app.url, 'operator@lab.example', 'demo-operator-pass');
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  await operator?.close();
  await observer?.close();
  await app?.close();
});

describe('bench live view', () => {
  it('lets an operator sweep and shows the fit with a visibility within the truth ± 3σ', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    await page.getByRole('heading', { name: 'Drive', exact: true }).waitFor();
    await page.getByLabel('From (V)').fill('5');
    await page.getByLabel('To (V)').fill('45');
    await page.getByLabel('Step (V)').fill('0.1');
    await page.getByLabel('Dwell (ms)').fill('10');
    await page.getByLabel('Passes').fill('4');
    await expect(page.getByRole('note', { name: 'Laser safety' }).textContent()).resolves.toContain('safety officer');
    await page.getByRole('button', { name: 'Start sweep' }).click();
    await expect(page.getByTestId('drive-message').textContent()).resolves.toContain('sent');
    const fit = page.getByTestId('last-fit-visibility');
    await fit.waitFor({ timeout: 90_000 });
    const res = await page.evaluate(async (b) => (await fetch(`/api/v1/benches/${b}/sweeps?from=${Date.now() - 300_000}`)).json(), BENCH);
    const sweeps = res as { visibility: number; visibilityErr: number }[];
    expect(sweeps.length).toBeGreaterThan(0);
    const last = sweeps.at(-1)!;
    expect(Math.abs(last.visibility - TRUTH)).toBeLessThanOrEqual(3 * last.visibilityErr);
    await page.waitForTimeout(1500);
    await screenshotBothThemes(page, 'bench-operator');
  });

  it('lets an observer follow live without controls, and refuses a forged command', async () => {
    const page = observer.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    await page.getByTestId('rate-a').waitFor();
    await page.waitForFunction(() => !/–/.test(document.querySelector('[data-testid="rate-a"]')?.textContent ?? '–'), null, { timeout: 30_000 });
    expect(await page.getByRole('button', { name: 'Start sweep' }).count()).toBe(0);
    expect(await page.getByRole('button', { name: 'Stop drive' }).count()).toBe(0);
    expect(await page.getByRole('button', { name: 'Start run' }).count()).toBe(0);
    const status = await page.evaluate(async (b) => {
      const r = await fetch(`/api/v1/benches/${b}/commands`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ op: 'stop' }) });
      return r.status;
    }, BENCH);
    expect(status).toBe(403);
    await screenshotBothThemes(page, 'bench-observer-tablet');
  });

  it('captures every screen in both themes', async () => {
    const page = operator.page;
    // A run with a note, so the runs list and report have content.
    const run = await page.evaluate(async (b) => {
      const r = await fetch(`/api/v1/benches/${b}/runs`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ title: 'Screenshot run' }) });
      return (await r.json()) as { id: number };
    }, BENCH);
    await page.evaluate(async (id) => {
      await fetch(`/api/v1/runs/${id}/notes`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ body: 'Aligned arm 2; fringes look clean.' }) });
    }, run.id);
    for (const [name, path] of [
      ['overview', '/'],
      ['history', `/benches/${BENCH}/history`],
      ['runs', '/runs'],
      ['run-report', `/runs/${run.id}`],
    ] as const) {
      await page.goto(app.url + path);
      await page.waitForTimeout(2500);
      await screenshotBothThemes(page, name);
    }
    await page.evaluate(async (id) => fetch(`/api/v1/runs/${id}/stop`, { method: 'POST' }), run.id);
  });
});
