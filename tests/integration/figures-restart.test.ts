// The live figures across a server restart: a fresh live path and analysis on the same database
// read the last window of stored bins back, so a bench's rates show at once instead of filling over
// the window from the batches that arrive after it (gateway → broker → ingest → PostgreSQL →
// analysis, all real).
import { afterAll, expect, it } from 'vitest';
import { fitFringes } from '../../src/lib/analysis/fringe-fit.ts';
import { FIGURES_WINDOW_MS, startAnalysis, type AnalysisService } from '../../src/lib/server/analysis/service.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { connectGateway, freshGateway, makeBatch, publishBatch, startTestLive, until, type TestLive } from '../helpers/live-path.ts';

const DT = 10;
const PER_BATCH = 50;
const running: { t: TestLive; analysis: AnalysisService }[] = [];

async function start() {
  const t = await startTestLive();
  const analysis = startAnalysis({ fit: async (p, options) => fitFringes({ x: p.x, countsA: p.a, countsB: p.b, exposure: p.exposure }, options), publish: () => {} });
  running.push({ t, analysis });
  return { t, analysis };
}

async function stop(s: { t: TestLive; analysis: AnalysisService }) {
  s.analysis.close();
  await s.t.close();
  running.splice(running.indexOf(s), 1);
}

afterAll(async () => {
  for (const s of [...running]) await stop(s);
});

const storedBins = async (gatewayId: string) => Number((await getDbHandle().pool.query<{ n: string | null }>('select sum(n) as n from count_batches where gateway_id = $1', [gatewayId])).rows[0]?.n ?? 0);

it('shows the rates of the stored window after a restart, before any new batch', async () => {
  const first = await start();
  const gw = await freshGateway();
  const client = await connectGateway(first.t.mqttPort, gw.gatewayId, gw.token);
  // 4 s of 10 ms bins ending now: 20 counts a bin on `a` (2,000/s), 30 on `b` (3,000/s).
  const t0 = Math.floor((Date.now() - 4_000) / DT) * DT;
  for (let i = 0; i < 8; i++) await publishBatch(client, gw.gatewayId, makeBatch(t0 + i * PER_BATCH * DT, PER_BATCH, i, { dt: DT, value: (k) => (k === 'a' ? 20 : 30) }));
  await client.endAsync();
  await until(async () => (await storedBins(gw.gatewayId)) === 8 * PER_BATCH, 10_000, 'the batches stored');
  await stop(first);

  const second = await start();
  await until(() => second.analysis.figures(gw.benchId) !== null, 5_000, 'figures after the restart');
  const figures = second.analysis.figures(gw.benchId)!;
  expect(figures.at).toBe(t0 + 8 * PER_BATCH * DT);
  expect(figures.windowMs).toBe(FIGURES_WINDOW_MS);
  const rate = (key: string) => figures.channels.find((c) => c.channel === `${gw.gatewayId}/${key}`)?.rateRaw;
  // Every stored bin counted once: the whole 4 s at the rates sent.
  expect(rate('a')).toBeCloseTo(2_000, 6);
  expect(rate('b')).toBeCloseTo(3_000, 6);

  // The gateway carries on: its next batch joins the read-back window without a gap or a double.
  const client2 = await connectGateway(second.t.mqttPort, gw.gatewayId, gw.token);
  await publishBatch(client2, gw.gatewayId, makeBatch(t0 + 8 * PER_BATCH * DT, PER_BATCH, 8, { dt: DT, value: (k) => (k === 'a' ? 40 : 30) }));
  await client2.endAsync();
  await until(() => second.analysis.figures(gw.benchId)?.at === t0 + 9 * PER_BATCH * DT, 5_000, 'figures with the new batch');
  const after = second.analysis.figures(gw.benchId)!;
  // 8 batches at 20 and one at 40 a bin over 4.5 s.
  expect(after.channels.find((c) => c.channel === `${gw.gatewayId}/a`)?.rateRaw).toBeCloseTo(((8 * 20 + 40) * PER_BATCH) / 4.5, 6);
});
