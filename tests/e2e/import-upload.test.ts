// An operator imports a CSV recorded offline in a real browser: a refused row is reported once,
// for what is wrong with it (not also as "no data rows"); a good file ends in a link to the new
// run's report, and the history names the imported channels by their run beside the live ones.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_ACCOUNTS } from '../../src/lib/server/seed.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { islandsHydrated, launchBrowser, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const BENCH = `e2e-imp-${Date.now().toString(36).slice(-6)}`;
const T0 = 1_795_000_000_000; // a multiple of the 10 ms bins
let app: RunningApp;
let browser: Browser;

beforeAll(async () => {
  app = await startWebApp();
  await createBench({ id: BENCH, name: 'Import bench', wavelengthNm: 633 });
  browser = await launchBrowser({ width: 1280, height: 900 });
  const operator = DEMO_ACCOUNTS.find((a) => a.role === 'operator')!;
  await signIn(browser.page, app.url, operator.email, operator.password);
});
afterAll(async () => {
  await browser?.close();
  await app?.close();
});

/** A two-output recording: 400 bins of 10 ms over a fringe and a half. */
function recording(): string {
  const rows = Array.from({ length: 400 }, (_, i) => {
    const x = i * 0.1;
    const a = Math.round(200 * (1 + 0.9 * Math.cos(x)));
    const b = Math.round(200 * (1 - 0.9 * Math.cos(x)));
    return `${T0 + i * 10},${a},${b},${x.toFixed(2)}`;
  });
  return ['t_ms,a,b,x', ...rows].join('\n');
}

async function choose(csv: string): Promise<void> {
  const page = browser.page;
  await page.locator('#imp-file').setInputFiles({ name: 'offline.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) });
  await page.getByRole('button', { name: 'Check file' }).click();
}

describe('importing a CSV', () => {
  it('reports a refused row once, for its fault', async () => {
    const page = browser.page;
    await page.goto(`${app.url}/benches/${BENCH}/import`);
    await islandsHydrated(page);
    await choose('t_ms,a,b\n1000,3,x\n');
    const problems = page.getByRole('alert').filter({ hasText: 'Problems found' });
    await problems.waitFor();
    expect(await problems.locator('li').allTextContents()).toEqual(['line 2: b: "x" is not a count (integer 0…2^31−1)']);
  });

  it('links the new run after a good import, and the history names its channels by the run', async () => {
    const page = browser.page;
    await page.goto(`${app.url}/benches/${BENCH}/import`);
    await islandsHydrated(page);
    await choose(recording());
    await page.locator('#imp-title').fill('Offline fringe');
    await page.getByRole('button', { name: 'Import as a new run' }).click();
    const link = page.getByTestId('imported-run');
    await link.waitFor({ timeout: 30_000 });
    const runId = Number(/run (\d+)/.exec((await link.textContent()) ?? '')?.[1]);
    expect(runId).toBeGreaterThan(0);
    await expect.poll(() => page.getByRole('status').textContent()).toMatch(/Imported 400 bins into run \d+/);
    await Promise.all([page.waitForURL(`${app.url}/runs/${runId}`), link.click()]);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Offline fringe');

    await page.goto(`${app.url}/benches/${BENCH}/history?from=${T0 - 1_000}&to=${T0 + 5_000}`);
    await page.locator('.u-legend').first().waitFor();
    const legend = (await page.locator('.u-legend').first().textContent()) ?? '';
    expect(legend).toContain(`(imported run ${runId})`);
  });
});
