// The bench live view in a real browser against the real server and the demo simulators: an
// operator sweeps the heralded bench and sees the fit and a visibility consistent with the
// simulator's truth; an observer follows the same bench read-only, and a command forged from the
// observer's session is refused; screenshots of every screen in both themes go to test-results/.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFile } from 'node:fs/promises';
import type { Page } from 'playwright-core';
import type { RunningApp } from '../../src/server/app.ts';
import { findDemoBench } from '../../simulators/demo-benches.ts';
import { islandsHydrated, launchBrowser, screenshotBothThemes, signIn, type Browser } from '../helpers/browser.ts';
import { startWebApp } from '../helpers/web-app.ts';

const BENCH = 'mz-810';
const DEMO = findDemoBench(BENCH)!;
// Gated on the herald, the outputs carry almost no dark counts (250/s × 2 ns × 2·10⁵ heralds/s
// ≈ 0.1/s, the seeded calibration) and < 0.1% dead-time loss at ≈ 36 kc/s, so the fitted
// visibility (net of those darks, hardly above the raw one) estimates the optics' visibility itself.
const TRUTH = DEMO.model.optics.visibility;

let app: RunningApp;
let operator: Browser;
let observer: Browser;

beforeAll(async () => {
  app = await startWebApp({ simulate: true });
  // A zone other than the machine's (UTC here), so times shown in local time are seen to be.
  operator = await launchBrowser({ width: 1440, height: 1000, timezoneId: 'America/Chicago' });
  // The observer follows on a tablet at the bench.
  observer = await launchBrowser({ width: 1024, height: 768 });
  await signIn(operator.page, app.url, 'operator@lab.example', 'demo-operator-pass');
  await signIn(observer.page, app.url, 'observer@lab.example', 'demo-observer-pass');
});

afterAll(async () => {
  await operator?.close();
  await observer?.close();
  await app?.close();
});

/** "V = 0.9712 ± 0.0031" as shown beside the fringes. */
async function shownVisibility(page: Page): Promise<{ value: number; err: number }> {
  const text = (await page.getByTestId('last-fit-visibility').textContent()) ?? '';
  const m = /([\d.]+)\s*±\s*([\d.]+)/.exec(text);
  if (!m) throw new Error(`no visibility in "${text}"`);
  return { value: Number(m[1]), err: Number(m[2]) };
}

async function waitForLiveRate(page: Page, testId: string): Promise<void> {
  await page.getByTestId(testId).waitFor();
  await page.waitForFunction((id) => /\d/.test(document.querySelector(`[data-testid="${id}"]`)?.textContent ?? ''), testId, { timeout: 30_000 });
}

/** The history's visibility and stability charts drew (a canvas each) and settled without an error or empty state. */
async function expectHistoryCharts(page: Page): Promise<void> {
  for (const id of ['history-sweeps', 'stability-rates-chart']) await page.locator(`[data-testid="${id}"] canvas`).first().waitFor({ timeout: 15_000 });
  // The first test's passes on this bench are within the default hour, and so are its counts.
  await page.getByRole('table', { name: 'Fitted passes in the range by direction' }).waitFor({ timeout: 15_000 });
  // Their texts, not their number: a failure then says whether a chart was still loading, empty or in error.
  await expect.poll(() => page.locator('[data-testid="sweeps-state"], [data-testid="stability-state"]').allTextContents(), { timeout: 30_000 }).toEqual([]);
}

describe('bench live view', () => {
  it('lets an operator sweep and shows the fit with a visibility within the truth ± 3σ', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    await waitForLiveRate(page, 'rate-a');
    // Four sweeps, each up and down over four fringes (a fringe every ≈ 10 V): 8 × 400 steps of 10 ms, ≈ 32 s.
    await page.getByLabel('From (V)', { exact: true }).fill('5');
    await page.getByLabel('To (V)', { exact: true }).fill('45');
    await page.getByLabel('Step (V)', { exact: true }).fill('0.1');
    await page.getByLabel('Dwell (ms)', { exact: true }).fill('10');
    await page.getByLabel('Sweeps', { exact: true }).fill('4');
    expect(await page.getByRole('note', { name: 'Laser safety' }).textContent()).toContain('safety officer');
    await page.getByRole('button', { name: 'Start sweep' }).click();
    await expect.poll(() => page.getByTestId('drive-message').textContent()).toMatch(/^Sweep: accepted by gw-/);
    // What the piezo does is read off the positions in the counts: moving while the sweep runs.
    await expect.poll(() => page.getByTestId('drive-state').textContent(), { timeout: 10_000 }).toMatch(/moving (up|down) at \d+\.\d{3} V/);
    await page.getByTestId('last-fit-visibility').waitFor({ timeout: 90_000 });
    const v = await shownVisibility(page);
    expect(v.err).toBeGreaterThan(0);
    expect(v.err).toBeLessThan(0.02);
    expect(Math.abs(v.value - TRUTH)).toBeLessThanOrEqual(3 * v.err);
    // The fit is drawn over the counts: its series is in the chart's legend.
    expect(await page.locator('#fringe-h').locator('xpath=ancestor::section').locator('.u-legend').textContent()).toContain('fit A');
    await page.waitForTimeout(1500);
    await screenshotBothThemes(page, 'bench-operator');
  });

  it('lets an observer follow live without controls, and refuses a forged command', async () => {
    const page = observer.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    await waitForLiveRate(page, 'rate-a');
    await waitForLiveRate(page, 'rate-b');
    // The observer sees what the drive does too.
    await expect.poll(() => page.getByTestId('drive-state').textContent(), { timeout: 10_000 }).toMatch(/Piezo (holding at|moving (up|down) at) \d+\.\d{3} V/);
    for (const name of ['Start sweep', 'Stop drive', 'Hold', 'Start run', 'Add note']) {
      expect(await page.getByRole('button', { name, exact: true }).count(), name).toBe(0);
    }
    expect(await page.getByRole('spinbutton').count()).toBe(0);
    // A command forged from the observer's own page: the browser adds its real Origin and the
    // session cookie, so only the role check stands in the way.
    const res = await page.evaluate(async (b) => {
      const r = await fetch(`/api/v1/benches/${b}/commands`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ op: 'sweep', from: 0, to: 20, step: 0.1, dwell: 10, sweeps: 1 }) });
      return { status: r.status, body: await r.text() };
    }, BENCH);
    expect(res.status).toBe(403);
    expect(res.body).toContain('operator');
    await screenshotBothThemes(page, 'bench-observer-tablet');
  });

  it('names the coincidence window beside g²(0) on a laser bench', async () => {
    const page = observer.page;
    await page.goto(`${app.url}/benches/mz-633`);
    // The demo benches' counters use the seeded 2 ns window.
    await expect.poll(() => page.getByTestId('coincidence-window').textContent(), { timeout: 20_000 }).toBe('window 2.0 ns');
    expect(await page.getByRole('region', { name: 'Photon statistics' }).textContent()).toContain('g²(0), coincidences over accidentals');
  });

  it('keeps a run with a note and a snapshot, and captures every screen in both themes', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/benches/${BENCH}`);
    await waitForLiveRate(page, 'rate-a');
    await page.getByLabel('Run title').fill('Screenshot run');
    await page.getByRole('button', { name: 'Start run' }).click();
    const title = page.getByTestId('active-run-title');
    await title.waitFor();
    const href = await title.getAttribute('href');
    await page.getByLabel('Note', { exact: true }).fill('Aligned arm 2; fringes look clean.');
    await page.getByRole('button', { name: 'Add note' }).click();
    await expect.poll(() => page.getByRole('list', { name: 'Notes' }).textContent()).toContain('Aligned arm 2');
    // The snapshot line carries the figures on screen, with units.
    expect(await page.getByRole('list', { name: 'Notes' }).textContent()).toMatch(/\/s/);
    await screenshotBothThemes(page, 'bench-run');
    await page.getByRole('button', { name: 'Stop run' }).click();
    // Stopping asks first (src/lib/confirmations.ts); the dialog's own button goes ahead.
    await page.getByRole('dialog', { name: 'Stop the run “Screenshot run”?' }).getByRole('button', { name: 'Stop run' }).click();
    await page.getByLabel('Run title').waitFor();

    for (const [name, path] of [
      ['overview', '/'],
      ['history', `/benches/${BENCH}/history`],
      ['runs', '/runs'],
      ['run-report', href!],
      ['gateway', `/benches/${BENCH}/gateways/${DEMO.gateway}`],
      ['export-import', `/benches/${BENCH}/import`],
    ] as const) {
      const res = await page.goto(app.url + path);
      expect(res?.status(), path).toBe(200);
      if (name === 'history') await expectHistoryCharts(page);
      if (name === 'run-report') {
        // The server writes UTC; the reader sees local time (America/Chicago is UTC−6 in winter, and the run is in December).
        const t = page.locator('time[data-local]').first();
        const iso = (await t.getAttribute('datetime'))!;
        await expect.poll(() => t.textContent()).toBe(new Date(Date.parse(iso) - 6 * 3_600_000).toISOString().slice(0, 19).replace('T', ' '));
      }
      await page.waitForTimeout(2000);
      await screenshotBothThemes(page, name);
      if (name === 'history') {
        // Times are typed as YYYY-MM-DD HH:MM (24 h), whatever the browser's locale; a wrong one is marked, not applied.
        const from = page.getByLabel('From', { exact: true });
        const shown = async () => (await page.getByTestId('history-range').textContent())?.split(' · ')[0];
        const before = await shown();
        const start = await from.inputValue();
        await from.fill('2026-02-30 10:00');
        await from.press('Enter');
        await expect.poll(() => from.getAttribute('aria-invalid')).toBe('true');
        expect(await shown()).toBe(before);
        const earlier = start.replace(/ (\d{2}):/, (_m, h: string) => ` ${String(Math.max(0, Number(h) - 1)).padStart(2, '0')}:`);
        await from.fill(earlier);
        await from.press('Enter');
        await expect.poll(shown).toContain(earlier);
      }
    }
    expect(await page.getByRole('heading', { level: 1 }).count()).toBeGreaterThan(0);
  });

  it('exports a range typed in local time as the counts CSV, and says what is wrong with a bad range', async () => {
    const page = operator.page;
    await page.goto(`${app.url}/benches/${BENCH}/import`);
    await islandsHydrated(page);
    const from = page.getByLabel('From (your local time)');
    await from.fill('yesterday');
    await page.getByRole('button', { name: 'Download' }).click();
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('YYYY-MM-DD HH:MM');
    // The last ten minutes, where the first test's sweeps are, as the browser's clock on the wall
    // shows them (its zone is not this process's).
    const wall = (ms: number) =>
      page.evaluate((t) => {
        const d = new Date(t);
        const p = (n: number) => String(n).padStart(2, '0');
        return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}`;
      }, ms);
    await from.fill(await wall(Date.now() - 600_000));
    await page.getByLabel('To', { exact: true }).fill(await wall(Date.now() + 60_000));
    const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('button', { name: 'Download' }).click()]);
    const csv = await readFile((await download.path())!, 'utf8');
    expect(csv.split('\n').find((l) => !l.startsWith('#'))).toMatch(/^t_ms,/);
    expect(csv.split('\n').filter((l) => /^\d+,/.test(l)).length).toBeGreaterThan(100);
    // The same file checked for import into this bench: sent with its progress shown, read, and
    // refused for its time, which the bench already holds.
    await page.setInputFiles('#imp-file', (await download.path())!);
    await page.getByRole('button', { name: 'Check file' }).click();
    await page.getByRole('button', { name: 'Cannot import into this bench' }).waitFor({ timeout: 30_000 });
    await expect.poll(() => page.getByTestId('import-progress').count()).toBe(0);
  });
});
