// The live path's HTTP side against the built app: counts (JSON, CSV, raw vs rollups), commands
// (drive limits, publish, ack) and gateway health.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { auditLog, benches, countBatches, gatewayHealth } from '../../src/lib/server/db/schema.ts';
import { buildIfStale } from '../../src/server/build.ts';
import { and, eq } from 'drizzle-orm';
import { connectGateway, freshGateway, makeBatch, openLive, publishBatch, rolledUp, startTestLive, until, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

let t: TestLive;
let observer: string;
let operator: string;
const BASE = Math.floor(Date.now() / 3_600_000) * 3_600_000 - 2 * 3_600_000;

beforeAll(async () => {
  buildIfStale();
  t = await startTestLive({ web: true });
  observer = (await userWithToken('observer')).token;
  operator = (await userWithToken('operator')).token;
});
afterAll(async () => {
  await t.close();
});

const get = (path: string, token: string, headers: Record<string, string> = {}) =>
  fetch(`${t.baseUrl}${path}`, { headers: { authorization: `Bearer ${token}`, ...headers } });

describe('GET /api/v1/benches/{id}/counts', () => {
  let gw: Awaited<ReturnType<typeof freshGateway>>;
  // 3 minutes of 10 ms bins: a = 1 per bin, b = bin index within the batch.
  beforeAll(async () => {
    gw = await freshGateway();
    const c = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    for (let i = 0; i < 180; i++) {
      const b = makeBatch(BASE + i * 1000, 100, i, { value: (k, j) => (k === 'a' ? 1 : j) });
      await publishBatch(c, gw.gatewayId, { ...b, x: Array.from({ length: 100 }, (_, j) => j / 10), cc: Array.from({ length: 100 }, () => 2) });
    }
    await c.endAsync();
  });

  it('sums to the step from raw rows, 1 s and 1 min rollups alike', async () => {
    const from = BASE;
    const to = BASE + 180_000;
    const raw = await (await get(`/api/v1/benches/${gw.benchId}/counts?from=${from}&to=${to}&step=500`, observer)).json();
    const sec = await (await get(`/api/v1/benches/${gw.benchId}/counts?from=${new Date(from).toISOString()}&to=${new Date(to).toISOString()}&step=1000`, observer)).json();
    const min = await (await get(`/api/v1/benches/${gw.benchId}/counts?from=${from}&to=${to}&step=60000`, observer)).json();
    const a = `${gw.gatewayId}/a`;
    expect(raw.resolution).toBe('raw');
    expect(sec.resolution).toBe('1s');
    expect(min.resolution).toBe('1min');
    expect(raw.channels[a]).toHaveLength(360);
    expect(raw.channels[a][0]).toBe(50);
    expect(sec.channels[a]).toEqual(new Array(180).fill(100));
    expect(min.channels[a]).toEqual([6000, 6000, 6000]);
    expect(min.channels[`${gw.gatewayId}/b`]).toEqual(new Array(3).fill(60 * 4950));
    expect(raw.x[0]).toBeCloseTo(2.45, 10);
    expect(sec.cc[0]).toBe(200);
  });

  it('answers CSV with metadata comments', async () => {
    const res = await get(`/api/v1/benches/${gw.benchId}/counts?from=${BASE}&to=${BASE + 3000}&step=1000`, observer, { accept: 'text/csv' });
    expect(res.headers.get('content-type')).toMatch(/text\/csv/);
    const lines = (await res.text()).trim().split('\n');
    expect(lines[0]).toBe('# fringewise counts csv v1');
    expect(lines.some((l) => l.startsWith('# step_ms: 1000'))).toBe(true);
    const header = lines.find((l) => !l.startsWith('#'))!;
    expect(header).toBe(`t_ms,${gw.gatewayId}/a,${gw.gatewayId}/b,cc`);
    expect(lines.slice(-3)).toEqual([`${BASE},100,4950,200`, `${BASE + 1000},100,4950,200`, `${BASE + 2000},100,4950,200`]);
  });

  it('refuses bad and oversized queries with a reason', async () => {
    const bad = await get(`/api/v1/benches/${gw.benchId}/counts?from=yesterday&to=${BASE}`, observer);
    expect(bad.status).toBe(422);
    const huge = await get(`/api/v1/benches/${gw.benchId}/counts?from=0&to=${BASE}&step=1000`, observer);
    expect(huge.status).toBe(422);
    expect((await huge.json()).error).toMatch(/points/);
    expect((await get(`/api/v1/benches/${gw.benchId}/counts?from=0&to=1`, 'fwp_nope')).status).toBe(401);
  });

  it('refuses a raw step that is not a multiple of the stored bin width', async () => {
    for (const step of [15, 7, 5]) {
      const res = await get(`/api/v1/benches/${gw.benchId}/counts?from=${BASE}&to=${BASE + 3000}&step=${step}`, observer);
      expect(res.status, String(step)).toBe(422);
      expect((await res.json()).error, String(step)).toMatch(new RegExp(`step ${step} ms is not a multiple of the stored bin width \\(10 ms`));
    }
    expect((await get(`/api/v1/benches/${gw.benchId}/counts?from=${BASE}&to=${BASE + 3000}&step=30`, observer)).status).toBe(200);
  });
});

describe('GET /api/v1/benches/{id}/counts: time covered per bucket', () => {
  let gw: Awaited<ReturnType<typeof freshGateway>>;
  // 10 ms bins at 100 counts/s on `a`: recorded over [2.5 s, 7 s), a restart's 15 s gap (a new
  // boot), then [22 s, 64.5 s) from BASE. Every bucket's rate is 100/s however little of it is recorded.
  beforeAll(async () => {
    gw = await freshGateway();
    const c = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await publishBatch(c, gw.gatewayId, makeBatch(BASE + 2_500, 450, 0, { value: () => 1 }));
    await publishBatch(c, gw.gatewayId, makeBatch(BASE + 22_000, 4_250, 0, { boot: 'boot2', value: () => 1 }));
    await c.endAsync();
  });
  const counts = async (from: number, to: number, step: number) => {
    const res = await get(`/api/v1/benches/${gw.benchId}/counts?from=${BASE + from}&to=${BASE + to}&step=${step}`, observer);
    expect(res.status).toBe(200);
    return (await res.json()) as { resolution: string; channels: Record<string, (number | null)[]>; coveredMs: Record<string, number[]> };
  };
  const rates = (a: { channels: Record<string, (number | null)[]>; coveredMs: Record<string, number[]> }) =>
    a.channels[`${gw.gatewayId}/a`]!.map((v, i) => (v === null ? null : (v * 1000) / a.coveredMs[gw.gatewayId]![i]!));

  it('says how much of each raw bucket the bins cover', async () => {
    const raw = await counts(0, 66_000, 1_500);
    expect(raw.resolution).toBe('raw');
    expect(Object.keys(raw.coveredMs)).toEqual([gw.gatewayId]);
    const cov = raw.coveredMs[gw.gatewayId]!;
    expect(cov).toHaveLength(44);
    // [1.5, 3) s holds the recording's first 0.5 s, [6, 7.5) its 1 s before the gap, [21, 22.5) 0.5 s after it.
    expect(cov.slice(0, 6)).toEqual([0, 500, 1_500, 1_500, 1_000, 0]);
    expect(cov.slice(13, 16)).toEqual([0, 500, 1_500]);
    expect(cov.slice(-2)).toEqual([1_500, 0]);
    expect(rates(raw).filter((r) => r !== null)).toEqual(new Array(cov.filter((ms) => ms > 0).length).fill(100));
    expect(rates(raw).map((r) => r === null)).toEqual(cov.map((ms) => ms === 0));
  });

  it('counts the 1 s and 1 min rollups’ bins at the gateway’s bin width', async () => {
    const sec = await counts(0, 65_000, 5_000);
    expect(sec.resolution).toBe('1s');
    expect(sec.coveredMs[gw.gatewayId]).toEqual([2_500, 2_000, 0, 0, 3_000, 5_000, 5_000, 5_000, 5_000, 5_000, 5_000, 5_000, 4_500]);
    expect(rates(sec)).toEqual([100, 100, null, null, 100, 100, 100, 100, 100, 100, 100, 100, 100]);
    const min = await counts(0, 120_000, 60_000);
    expect(min.resolution).toBe('1min');
    expect(min.coveredMs[gw.gatewayId]).toEqual([42_500, 4_500]);
    expect(rates(min)).toEqual([100, 100]);
    // A range holding only a partly recorded slot: its width comes from the stored rows, not the slot.
    expect((await counts(2_000, 3_000, 1_000)).coveredMs[gw.gatewayId]).toEqual([500]);
  });

  it('reads the bin width from the rollups once the raw rows are past retention', async () => {
    // Retention takes raw rows only once their sums are in the rollups.
    await rolledUp(gw.gatewayId);
    await getDb().delete(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId));
    const sec = await counts(0, 65_000, 5_000);
    expect(sec.coveredMs[gw.gatewayId]).toEqual([2_500, 2_000, 0, 0, 3_000, 5_000, 5_000, 5_000, 5_000, 5_000, 5_000, 5_000, 4_500]);
  });

  it('reads bins longer than a rollup slot (2 s at the 1 s level) from the slots\' spacing past retention', async () => {
    const long = await freshGateway();
    const c = await connectGateway(t.mqttPort, long.gatewayId, long.token);
    // 30 bins of 2 s from BASE (a multiple of 2 s), 200 counts each: 100/s.
    await publishBatch(c, long.gatewayId, makeBatch(BASE, 30, 0, { dt: 2_000, keys: ['a'], value: () => 200 }));
    await c.endAsync();
    await until(async () => (await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, long.gatewayId))).length > 0, 10_000, 'the batch stored');
    await rolledUp(long.gatewayId);
    await getDb().delete(countBatches).where(eq(countBatches.gatewayId, long.gatewayId));
    const res = await get(`/api/v1/benches/${long.benchId}/counts?from=${BASE}&to=${BASE + 60_000}&step=10000`, observer);
    const body = (await res.json()) as { resolution: string; coveredMs: Record<string, number[]> };
    expect(body.resolution).toBe('1s');
    expect(body.coveredMs[long.gatewayId]).toEqual(new Array(6).fill(10_000));
  });
});

describe('POST /api/v1/benches/{id}/commands', () => {
  it('checks drive limits, publishes with a fresh id, and pushes the ack', async () => {
    const gw = await freshGateway();
    await getDb().update(benches).set({ driveMin: 0, driveMax: 50, driveMaxStep: 0.5, driveMinDwellMs: 5 }).where(eq(benches.id, gw.benchId));
    const post = (token: string, body: unknown) =>
      fetch(`${t.baseUrl}/api/v1/benches/${gw.benchId}/commands`, { method: 'POST', headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' }, body: JSON.stringify(body) });
    expect((await post(observer, { op: 'stop' })).status).toBe(403);
    const outside = await post(operator, { op: 'sweep', from: 0, to: 80, step: 0.1, dwell: 10, sweeps: 1 });
    expect(outside.status).toBe(422);
    expect((await outside.json()).error).toMatch(/to 80 V is outside/);
    expect((await post(operator, { op: 'hold', x: 'high' })).status).toBe(422);

    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await client.subscribeAsync(topicFor(gw.gatewayId, 'cmd'), { qos: 1 });
    const got = new Promise<{ id: string; op: string; v: number }>((resolve) => client.once('message', (_t, p) => resolve(JSON.parse(String(p)))));
    const ws = await openLive(t.baseUrl, gw.benchId, observer);
    const res = await post(operator, { op: 'sweep', from: 0, to: 40, step: 0.05, dwell: 20, sweeps: 4 });
    expect(res.status).toBe(202);
    const { id } = (await res.json()) as { id: string };
    const cmd = await got;
    expect(cmd).toEqual({ v: 1, id, op: 'sweep', from: 0, to: 40, step: 0.05, dwell: 20, sweeps: 4 });
    // The audit entry leads with what was commanded (the id is the entry's own; jsonb keeps shorter keys first).
    const [audit] = await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'command'), eq(auditLog.entityId, id)));
    expect(Object.keys(audit!.after as object)[0]).toBe('op');
    expect(audit!.after).toMatchObject({ op: 'sweep', from: 0, to: 40, bench: gw.benchId, gateway: gw.gatewayId });
    await client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id, ok: false, error: 'out of scan range' }), { qos: 1 });
    expect(await ws.next((m) => m.type === 'ack')).toEqual({ type: 'ack', bench: gw.benchId, gateway: gw.gatewayId, id, ok: false, error: 'out of scan range' });
    await client.endAsync();
    ws.ws.close();
  });

  it('refuses and counts acks of commands never sent to the gateway; finds those sent before a restart in the audit trail', async () => {
    const gw = await freshGateway();
    const other = await freshGateway(gw.benchId);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const ws = await openLive(t.baseUrl, gw.benchId, observer);
    const ack = (id: string) => client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id, ok: true }), { qos: 1 });
    // Sent to the other gateway of the bench, then acked by this one; and an id never sent at all.
    await t.live.commands.publish(other.gatewayId, { v: 1, id: 'for-the-other', op: 'stop' });
    await ack('for-the-other');
    await ack('never-sent');
    // As the server before a restart left it: only the audit entry of the command.
    await getDb().insert(auditLog).values({ actorId: null, entity: 'command', entityId: 'before-restart', action: 'send', after: { op: 'stop', bench: gw.benchId, gateway: gw.gatewayId } });
    await ack('before-restart');
    expect(await ws.next((m) => m.type === 'ack')).toMatchObject({ id: 'before-restart', ok: true });
    expect(ws.messages.filter((m) => m.type === 'ack').map((m) => (m.type === 'ack' ? m.id : ''))).toEqual(['before-restart']);
    const health = async () => (await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gw.gatewayId)))[0];
    await until(async () => (await health())?.rejected === 2, 10_000, 'two refused acks counted');
    const h = await health();
    expect((h!.lastRejects as { reason: string }[]).map((r) => r.reason)).toEqual([
      'ack: no command "never-sent" was sent to this gateway',
      'ack: no command "for-the-other" was sent to this gateway',
    ]);
    const audited = await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'command'), eq(auditLog.action, 'ack')));
    expect(audited.map((a) => a.entityId)).not.toContain('never-sent');
    expect(audited.map((a) => a.entityId)).not.toContain('for-the-other');
    await client.endAsync();
    ws.ws.close();
  });
});

describe('POST /api/v1/benches/{id}/commands: sweeps that cannot run, and offline gateways', () => {
  const post = (bench: string, body: unknown) =>
    fetch(`${t.baseUrl}/api/v1/benches/${bench}/commands`, { method: 'POST', headers: { authorization: `Bearer ${operator}`, 'content-type': 'application/json' }, body: JSON.stringify(body) });

  it('refuses a sweep without a span, with too many steps, or running past a week, with the reason', async () => {
    const gw = await freshGateway();
    await getDb().update(benches).set({ driveMin: 0, driveMax: 50, driveMaxStep: 0.5, driveMinDwellMs: 1 }).where(eq(benches.id, gw.benchId));
    const cases: [object, RegExp][] = [
      [{ from: 12, to: 12, step: 0.1, dwell: 10, sweeps: 1 }, /needs a span/],
      [{ from: 0, to: 40, step: 1e-7, dwell: 10, sweeps: 10_000 }, /400000000 steps .* at most 65536 per pass/],
      [{ from: 0, to: 40, step: 0.001, dwell: 100, sweeps: 10_000 }, /days; at most 7 days/],
    ];
    for (const [body, reason] of cases) {
      const res = await post(gw.benchId, { op: 'sweep', ...body });
      expect(res.status, JSON.stringify(body)).toBe(422);
      expect((await res.json()).error, JSON.stringify(body)).toMatch(reason);
    }
    // A downward sweep is a sweep.
    expect((await post(gw.benchId, { op: 'sweep', from: 40, to: 0, step: 0.05, dwell: 20, sweeps: 1 })).status).toBe(202);
  });

  it('says whether the drive gateway is online, so a client knows no ack will come', async () => {
    const gw = await freshGateway();
    const offline = await post(gw.benchId, { op: 'stop' });
    expect(offline.status).toBe(202);
    expect(await offline.json()).toEqual({ id: expect.any(String), gateway: gw.gatewayId, gatewayOnline: false });
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', boot: 'b1', channels: ['a', 'b'] }), { qos: 1, retain: true });
    await until(async () => ((await (await post(gw.benchId, { op: 'stop' })).json()) as { gatewayOnline: boolean }).gatewayOnline, 5_000, 'gateway online');
    await client.endAsync();
  });
});

describe('GET /api/v1/gateways/{gw}/health', () => {
  it('reports counters, rejects with reasons, rates and the page renders', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const now = Math.floor(Date.now() / 1000) * 1000 - 5000;
    await publishBatch(client, gw.gatewayId, makeBatch(now, 100, 0, { value: () => 3 }));
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), '{"v":1,"boot":"x","seq":1,"t0":5,"dt":10,"ch":{"a":[1]}}', { qos: 1 });
    const res = await get(`/api/v1/gateways/${gw.gatewayId}/health`, observer);
    expect(res.status).toBe(200);
    const h = await res.json();
    expect(h).toMatchObject({ id: gw.gatewayId, accepted: 1, rejected: 1, seqGaps: 0, refused: 0 });
    expect(h.lastRejects[0].reason).toMatch(/t0 is not a multiple of dt/);
    expect(h.rates.countsPerSecond.a).toBeCloseTo(300, 6);
    expect(h.clockOffsetMs).toBeGreaterThanOrEqual(3000);
    const page = await get(`/benches/${gw.benchId}/gateways/${gw.gatewayId}`, observer);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain('t0 is not a multiple of dt');
    await client.endAsync();
  });
});
