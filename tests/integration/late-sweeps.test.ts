// Late count batches and the sweep fits: the live tracker goes on with the pass under way, and the
// stored range around a late span is refitted, so out-of-order delivery ends with the same fitted
// sweeps as in-order delivery (gateway → broker → ingest → PostgreSQL → analysis, all real).
import { asc, eq } from 'drizzle-orm';
import type { MqttClient } from 'mqtt';
import { afterAll, beforeAll, expect, it } from 'vitest';
import { fitFringes } from '../../src/lib/analysis/fringe-fit.ts';
import type { CountBatch } from '../../src/lib/contract/wire.ts';
import { startAnalysis, type AnalysisService } from '../../src/lib/server/analysis/service.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { sweeps } from '../../src/lib/server/db/schema.ts';
import { serverEvents } from '../../src/lib/server/events.ts';
import { connectGateway, freshGateway, startTestLive, until, type TestLive } from '../helpers/live-path.ts';

const DT = 10;
const PER_BATCH = 50;
// Half an hour ago, on a minute boundary: bins in the past, like a replaying gateway's.
const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 1_800_000;
let t: TestLive;
let analysis: AnalysisService;
const published: { bench: string; type: string; [k: string]: unknown }[] = [];

beforeAll(async () => {
  t = await startTestLive();
  analysis = startAnalysis({ fit: async (p, options) => fitFringes({ x: p.x, countsA: p.a, countsB: p.b, exposure: p.exposure }, options), publish: (_b, m) => published.push(m), lateQuietMs: 300 });
});
afterAll(async () => {
  analysis?.close();
  await t?.close();
});

/**
 * Four passes of a triangle drive (200 bins each, up, down, up, down, 0.1 V a bin), then 1.5 s at
 * rest, which ends the last pass. Two complementary outputs, 5 V a fringe, with seeded noise.
 */
function recording(): CountBatch[] {
  let seed = 12345;
  const uniform = () => ((seed = (seed * 1_103_515_245 + 12_345) % 2_147_483_648) + 0.5) / 2_147_483_648;
  const noisy = (mean: number) => Math.max(0, Math.round(mean + Math.sqrt(mean) * Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform())));
  const x: number[] = [];
  for (let pass = 0; pass < 4; pass++) for (let k = 0; k < 200; k++) x.push((pass % 2 === 0 ? k : 199 - k) / 10);
  for (let k = 0; k < 150; k++) x.push(0);
  const a = x.map((v) => noisy(200 * (1 + 0.9 * Math.cos((2 * Math.PI * v) / 5 + 0.4)) + 5));
  const b = x.map((v) => noisy(200 * (1 - 0.9 * Math.cos((2 * Math.PI * v) / 5 + 0.4)) + 5));
  const batches: CountBatch[] = [];
  for (let i = 0; i < x.length; i += PER_BATCH) {
    batches.push({ v: 1, boot: 'late', seq: i / PER_BATCH, t0: BASE + i * DT, dt: DT, ch: { a: a.slice(i, i + PER_BATCH), b: b.slice(i, i + PER_BATCH) }, x: x.slice(i, i + PER_BATCH) });
  }
  return batches;
}

/** Publishes a batch and waits until ingest has stored it, so the analysis sees batches in the order sent. */
async function send(client: MqttClient, gatewayId: string, batch: CountBatch): Promise<void> {
  const stored = new Promise<void>((resolve) => {
    const on = (e: { gatewayId: string; batch: CountBatch }) => {
      if (e.gatewayId !== gatewayId || e.batch.t0 > batch.t0 || e.batch.t0 + e.batch.ch['a']!.length * DT <= batch.t0) return;
      serverEvents().off('batch-stored', on);
      resolve();
    };
    serverEvents().on('batch-stored', on);
  });
  await client.publishAsync(`fringewise/v1/${gatewayId}/counts`, JSON.stringify(batch), { qos: 1 });
  await stored;
}

/** Sends the batches in the given order through a fresh gateway; resolves with its bench. */
async function deliver(order: CountBatch[]): Promise<string> {
  const gw = await freshGateway();
  const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
  for (const batch of order) await send(client, gw.gatewayId, batch);
  await client.endAsync();
  return gw.benchId;
}

/** The bench's stored sweeps, times relative to the recording's start. */
async function fitted(benchId: string) {
  const rows = await getDb().select().from(sweeps).where(eq(sweeps.benchId, benchId)).orderBy(asc(sweeps.startMs));
  return rows.map((r) => ({ start: r.startMs - BASE, end: r.endMs - BASE, direction: r.direction, visibility: r.visibility, visibilityErr: r.visibilityErr, phase: r.phase, periodX: r.periodX, counts: r.counts }));
}

const spans = (rows: Awaited<ReturnType<typeof fitted>>) => rows.map((r) => `${r.direction} ${r.start}–${r.end}`).join(', ');

let inOrder: Awaited<ReturnType<typeof fitted>>;

beforeAll(async () => {
  const bench = await deliver(recording());
  await until(async () => (await fitted(bench)).length === 4, 10_000, 'four passes fitted in order');
  inOrder = await fitted(bench);
  expect(spans(inOrder)).toBe('up 0–2000, down 2000–4000, up 4000–6000, down 6000–7990');
});

it('ends with the same fitted sweeps when batches of two passes arrive late, replacing the partial passes their gaps left', async () => {
  const all = recording();
  // Batch 5 (inside the first down pass) comes after batch 8; 12 and 13 (the second down pass) after 15.
  const order = [0, 1, 2, 3, 4, 6, 7, 8, 5, 9, 10, 11, 14, 15, 12, 13, 16, 17, 18].map((i) => all[i]!);
  const bench = await deliver(order);
  await until(async () => spans(await fitted(bench)) === spans(inOrder), 10_000, 'the late spans refitted');
  expect(await fitted(bench)).toEqual(inOrder);
  // The clients were told: the partial passes went, the whole ones came.
  const mine = published.filter((m) => m.bench === bench);
  const replaced = mine.filter((m) => m.type === 'sweeps-replaced');
  expect(replaced.length).toBeGreaterThanOrEqual(1);
  const lastSweeps = new Map<string, { startMs: number; direction: string; visibility: number }>();
  for (const m of mine) if (m.type === 'sweep') {
    const s = m['sweep'] as { startMs: number; direction: string; visibility: number };
    lastSweeps.set(`${s.startMs} ${s.direction}`, s);
  }
  expect(lastSweeps.get(`${BASE + 2000} down`)?.visibility).toBe(inOrder[1]!.visibility);
  expect(lastSweeps.get(`${BASE + 6000} down`)?.visibility).toBe(inOrder[3]!.visibility);
});

it('does not break the pass under way when a batch from long before arrives in its middle', async () => {
  const all = recording();
  const old: CountBatch = { ...all[0]!, seq: 99, t0: BASE - 60_000, x: new Array<number>(PER_BATCH).fill(0) };
  const order = [...all.slice(0, 3), old, ...all.slice(3)];
  const bench = await deliver(order);
  await until(async () => (await fitted(bench)).length === 4, 10_000, 'four passes fitted');
  expect(await fitted(bench)).toEqual(inOrder);
  // The first pass was fitted live, through the late batch, before any refit.
  const first = published.find((m) => m.bench === bench && (m.type === 'sweep' || m.type === 'sweeps-replaced'));
  expect(first).toMatchObject({ type: 'sweep', sweep: { startMs: BASE, direction: 'up' } });
});
