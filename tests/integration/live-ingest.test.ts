// The live path end to end in one process: gateway (mqtt.js) → embedded broker → PostgreSQL →
// WebSocket. Exactly-once storage, late bins and rollups, broker policy, status and resume.
import { eq, sql } from 'drizzle-orm';
import net from 'node:net';
import mqttPacket from 'mqtt-packet';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import type { CountsMessage, LiveMessage } from '../../src/lib/live-messages.ts';
import { getDb, getDbHandle } from '../../src/lib/server/db/index.ts';
import { channels, countBatches, gatewayHealth, gateways, rollups } from '../../src/lib/server/db/schema.ts';
import { BatchWriter } from '../../src/lib/server/ingest/store.ts';
import { NEXT_PAGE_SQL } from '../../src/lib/server/live/resume.ts';
import { maxPacketRemaining } from '../../src/lib/server/mqtt/broker.ts';
import { listBenches } from '../../src/lib/server/benches.ts';
import { revokeGateway } from '../../src/lib/server/provisioning.ts';
import { connectGateway, freshGateway, makeBatch, openLive, openLiveQuery, openStatusWatch, publishBatch, rolledUp, startTestLive, until, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

let t: TestLive;
let observerToken: string;
// Ten minutes ago, on a minute boundary: bins in the past, like a live gateway's.
const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 600_000;

beforeAll(async () => {
  t = await startTestLive();
  observerToken = (await userWithToken('observer')).token;
});
afterAll(async () => {
  await t.close();
});

async function rawSum(gatewayId: string): Promise<{ rows: number; bins: number; sum: number }> {
  const [r] = await getDb()
    .select({
      rows: sql<number>`count(*)::int`,
      bins: sql<number>`coalesce(sum(n), 0)::int`,
      sum: sql<number>`coalesce((select sum(v) from count_batches c2, unnest(unpack_counts(c2.counts)) v where c2.gateway_id = ${gatewayId}), 0)::int`,
    })
    .from(countBatches)
    .where(eq(countBatches.gatewayId, gatewayId));
  return r!;
}

async function rollupTotal(gatewayId: string, stepMs: number): Promise<{ sum: number; bins: number }> {
  await rolledUp(gatewayId);
  const [r] = await getDb()
    .select({
      sum: sql<number>`coalesce((select sum(v) from rollups r2, unnest(r2.sums) v where r2.gateway_id = ${gatewayId} and r2.step_ms = ${stepMs} and r2.key <> '#cc'), 0)::int`,
      bins: sql<number>`coalesce((select sum(v) from rollups r2, unnest(r2.bins) v where r2.gateway_id = ${gatewayId} and r2.step_ms = ${stepMs} and r2.key <> '#cc'), 0)::int`,
    })
    .from(rollups)
    .limit(1);
  return r ?? { sum: 0, bins: 0 };
}

async function health(gatewayId: string) {
  const [h] = await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gatewayId));
  return h!;
}

describe('exactly once', () => {
  it('stores a batch, pushes it, and ignores the same batch sent again', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const batch = { ...makeBatch(BASE, 100, 0), x: Array.from({ length: 100 }, (_, i) => i * 0.1), cc: Array.from({ length: 100 }, () => 1) };
    await publishBatch(client, gw.gatewayId, batch);
    const msg = (await ws.next((m) => m.type === 'counts')) as CountsMessage;
    expect(msg).toEqual({ type: 'counts', bench: gw.benchId, gateway: gw.gatewayId, t0: BASE, dt: 10, ch: batch.ch, x: batch.x, cc: batch.cc });
    const before = await rawSum(gw.gatewayId);
    await publishBatch(client, gw.gatewayId, batch);
    await publishBatch(client, gw.gatewayId, batch);
    expect(await rawSum(gw.gatewayId)).toEqual(before);
    expect(before.bins).toBe(100);
    const h = await health(gw.gatewayId);
    expect(h.accepted).toBe(1);
    expect(h.duplicates).toBe(2);
    expect(ws.messages.filter((m) => m.type === 'counts')).toHaveLength(1);
    // Channels appear on first report.
    const chs = await getDb().select().from(channels).where(eq(channels.gatewayId, gw.gatewayId));
    expect(chs.map((c) => c.key).sort()).toEqual(['a', 'b']);
    await client.endAsync();
    ws.ws.close();
  });

  it('hands every frame, in order, to 120 browsers of one bench', async () => {
    const gw = await freshGateway();
    const sockets = await Promise.all(Array.from({ length: 120 }, () => openLive(t.baseUrl, gw.benchId, observerToken)));
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    // Not awaited one by one: several frames are on their way at once.
    await Promise.all([0, 1, 2, 3].map((i) => publishBatch(client, gw.gatewayId, makeBatch(BASE + 5_000_000 + i * 1000, 100, i))));
    const bins = (ws: (typeof sockets)[number]) => ws.messages.flatMap((m) => (m.type === 'counts' ? [[m.t0, (m as CountsMessage).ch['a']!.length]] : []));
    await until(() => sockets.every((ws) => bins(ws).reduce((n, [, len]) => n + len!, 0) === 400), 10_000, 'every socket to get 400 bins');
    for (const ws of sockets) {
      const got = bins(ws);
      // Contiguous batches may arrive merged; what matters is all of them, in time order.
      for (let i = 1; i < got.length; i++) expect(got[i]![0]!).toBe(got[i - 1]![0]! + got[i - 1]![1]! * 10);
      expect(got[0]![0]).toBe(BASE + 5_000_000);
      ws.ws.close();
    }
    await client.endAsync();
  });

  it('stores only the uncovered bins of a differently chunked re-send, and late bins with their rollups', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const value = (k: string, i: number) => (k === 'a' ? 1000 + i : 7);
    // Bins are indexed from BASE so any chunking carries the same values.
    const chunk = (from: number, n: number, seq: number) =>
      makeBatch(BASE + from * 10, n, seq, { value: (k, i) => value(k, from + i) });
    await publishBatch(client, gw.gatewayId, chunk(1000, 100, 0));
    await publishBatch(client, gw.gatewayId, chunk(1100, 100, 1));
    await publishBatch(client, gw.gatewayId, chunk(1050, 100, 2)); // fully covered: duplicate
    await publishBatch(client, gw.gatewayId, chunk(1150, 150, 3)); // 1200–1300 new
    await publishBatch(client, gw.gatewayId, chunk(0, 100, 4)); // late: ten seconds earlier
    const raw = await rawSum(gw.gatewayId);
    expect(raw.bins).toBe(400);
    let expected = 0;
    for (const from of [0, 1000]) for (let i = from; i < from + (from ? 300 : 100); i++) expected += value('a', i) + value('b', i);
    expect(raw.sum).toBe(expected);
    for (const step of [1_000, 60_000]) expect(await rollupTotal(gw.gatewayId, step)).toEqual({ sum: expected, bins: 800 });
    const h = await health(gw.gatewayId);
    expect(h.accepted).toBe(4);
    expect(h.duplicates).toBe(1);
    await client.endAsync();
  });

  it('plans a burst in one write against the batches stored earlier in that write', async () => {
    const gw = await freshGateway();
    const value = (k: string, i: number) => (k === 'a' ? 500 + i : 3);
    const chunk = (from: number, n: number, seq: number) => makeBatch(BASE + from * 10, n, seq, { value: (k, i) => value(k, from + i) });
    // Submitted in one turn, so they share a write: in order, a re-chunked overlap, a gap filled late.
    const outcomes = await Promise.all(
      [chunk(0, 100, 0), chunk(100, 100, 1), chunk(50, 100, 2), chunk(300, 100, 3), chunk(150, 200, 4)].map((b) => t.live.ingest.writer.submit(gw.gatewayId, b)),
    );
    expect(outcomes.map((o) => o.kind)).toEqual(['stored', 'stored', 'duplicate', 'stored', 'stored']);
    const raw = await rawSum(gw.gatewayId);
    expect(raw.bins).toBe(400);
    // The first two continue each other and share a row; the late-filled gap stays its own row.
    expect(raw.rows).toBe(3);
    let expected = 0;
    for (let i = 0; i < 400; i++) expected += value('a', i) + value('b', i);
    expect(raw.sum).toBe(expected);
    for (const step of [1_000, 60_000]) expect(await rollupTotal(gw.gatewayId, step)).toEqual({ sum: expected, bins: 800 });
  });

  it('a write whose reply is lost after COMMIT is retried without adding its rollups twice', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await publishBatch(client, gw.gatewayId, makeBatch(BASE, 100, 0));
    // The next write statement commits, then its connection "drops" before the reply is read: the
    // error a reset socket gives (no SQLSTATE), which the writer retries.
    const query = pg.Client.prototype.query;
    let armed = true;
    pg.Client.prototype.query = function (this: pg.Client, ...args: unknown[]) {
      const out = (query as (...a: unknown[]) => unknown).apply(this, args);
      if (armed && (args[0] as { name?: string } | undefined)?.name === 'ingest-write') {
        armed = false;
        return (out as Promise<unknown>).then(() => {
          throw new Error('Connection terminated unexpectedly');
        });
      }
      return out;
    } as typeof query;
    try {
      await publishBatch(client, gw.gatewayId, makeBatch(BASE + 1000, 100, 1));
    } finally {
      pg.Client.prototype.query = query;
    }
    expect(armed).toBe(false);
    const raw = await rawSum(gw.gatewayId);
    expect(raw.bins).toBe(200);
    for (const step of [1_000, 60_000]) expect(await rollupTotal(gw.gatewayId, step)).toEqual({ sum: raw.sum, bins: 400 });
    // The retry found its batch stored: a duplicate, not a second acceptance.
    const h = await health(gw.gatewayId);
    expect([h.accepted, h.duplicates]).toEqual([2, 1]);
    await client.endAsync();
  });

  it('rejects an overlap on a different bin grid and counts seq gaps', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await publishBatch(client, gw.gatewayId, makeBatch(BASE, 100, 1));
    await publishBatch(client, gw.gatewayId, makeBatch(BASE + 500, 10, 2, { dt: 100 }));
    await publishBatch(client, gw.gatewayId, makeBatch(BASE + 2000, 10, 5));
    const h = await health(gw.gatewayId);
    expect(h.rejected).toBe(1);
    expect((h.lastRejects as { reason: string }[])[0]!.reason).toMatch(/different bin grid/);
    expect(h.seqGaps).toBe(2);
    expect(h.clockOffsetMs).toBeGreaterThan(500_000);
    await client.endAsync();
  });
});

describe('broker policy', () => {
  it('refuses a wrong token and a revoked gateway at CONNECT', async () => {
    const gw = await freshGateway();
    await expect(connectGateway(t.mqttPort, gw.gatewayId, 'fwg_wrong')).rejects.toMatchObject({ code: 4 });
    await expect(connectGateway(t.mqttPort, 'no-such-gateway', gw.token)).rejects.toMatchObject({ code: 4 });
    const live = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const closed = new Promise<void>((r) => live.once('close', () => r()));
    await revokeGateway(gw.gatewayId);
    await closed; // revocation drops the live session
    await expect(connectGateway(t.mqttPort, gw.gatewayId, gw.token)).rejects.toMatchObject({ code: 5 });
    await until(async () => (await health(gw.gatewayId)).refused >= 2, 5_000, 'refusals counted');
  });

  it('refuses a gateway connecting with another gateway’s client id, and leaves that gateway connected', async () => {
    const a = await freshGateway();
    const b = await freshGateway();
    const real = await connectGateway(t.mqttPort, a.gatewayId, a.token, { clientId: a.gatewayId });
    let kicked = false;
    real.once('close', () => (kicked = true));
    await expect(connectGateway(t.mqttPort, b.gatewayId, b.token, { clientId: a.gatewayId })).rejects.toMatchObject({ code: 2 });
    await until(async () => (await health(b.gatewayId)).refused === 1, 5_000, 'refusal counted');
    // A client id another gateway holds is refused too: its session (subscriptions, queued commands) stays its own.
    const own = await connectGateway(t.mqttPort, a.gatewayId, a.token, { clientId: `box-${a.gatewayId}`, clean: false });
    await own.subscribeAsync(topicFor(a.gatewayId, 'cmd'), { qos: 1 });
    await own.endAsync();
    await expect(connectGateway(t.mqttPort, b.gatewayId, b.token, { clientId: `box-${a.gatewayId}` })).rejects.toMatchObject({ code: 2 });
    await until(async () => (await health(b.gatewayId)).refused === 2, 5_000, 'refusal counted');
    // Its own id and an id of its own choosing (mosquitto_pub, mqtt.js defaults) are served.
    for (const clientId of [b.gatewayId, `mqttjs_${b.gatewayId}`]) {
      const c = await connectGateway(t.mqttPort, b.gatewayId, b.token, { clientId });
      await c.endAsync();
    }
    expect(kicked).toBe(false);
    expect(real.connected).toBe(true);
    await real.endAsync();
  });

  it('closes a connection at a packet just over the size limit, counts it, and stores nothing', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const closed = new Promise<void>((r) => client.once('close', () => r()));
    const topic = topicFor(gw.gatewayId, 'counts');
    // Remaining length = topic length (2) + topic + packet id (2) + payload = the limit + 1.
    const payload = Buffer.alloc(maxPacketRemaining('fringewise/v1') + 1 - 4 - topic.length, 0x20);
    void client.publishAsync(topic, payload, { qos: 1 }).catch(() => undefined);
    await closed;
    client.end(true);
    await until(async () => (await health(gw.gatewayId)).refused === 1, 5_000, 'refusal counted');
    expect((await health(gw.gatewayId)).lastRejects).toEqual([expect.objectContaining({ reason: expect.stringMatching(/^refused: packet of \d+ bytes or more is over the \d+-byte limit/) })]);
    expect((await rawSum(gw.gatewayId)).rows).toBe(0);
  });

  it('closes a connection announcing a 100 MB publish without waiting for its body', async () => {
    const gw = await freshGateway();
    const socket = net.connect(t.mqttPort, '127.0.0.1');
    await new Promise<void>((r) => socket.once('connect', () => r()));
    const connack = new Promise<void>((r) => socket.once('data', () => r()));
    socket.write(mqttPacket.generate({ cmd: 'connect', protocolId: 'MQTT', protocolVersion: 4, clientId: gw.gatewayId, clean: true, keepalive: 30, username: gw.gatewayId, password: Buffer.from(gw.token) }));
    await connack;
    const closed = new Promise<void>((r) => socket.once('close', () => r()));
    // PUBLISH QoS 1 with a remaining length of 100,663,296 bytes, then only its first kilobyte.
    socket.write(Buffer.concat([Buffer.from([0x32, 0x80, 0x80, 0x80, 0x30]), Buffer.alloc(1024, 0x20)]));
    await closed;
    await until(async () => (await health(gw.gatewayId)).refused === 1, 5_000, 'refusal counted');
  });

  it('refuses publishing under another gateway id and stores nothing of it', async () => {
    const a = await freshGateway();
    const b = await freshGateway();
    const client = await connectGateway(t.mqttPort, a.gatewayId, a.token);
    const closed = new Promise<void>((r) => client.once('close', () => r()));
    void client.publishAsync(topicFor(b.gatewayId, 'counts'), JSON.stringify(makeBatch(BASE, 10, 0)), { qos: 1 }).catch(() => undefined);
    await closed;
    client.end(true);
    await until(async () => (await health(a.gatewayId)).refused === 1, 5_000, 'refusal counted');
    expect((await rawSum(b.gatewayId)).rows).toBe(0);
    expect((await rawSum(a.gatewayId)).rows).toBe(0);
  });

  it('refuses subscribing to anything but its own cmd topic', async () => {
    const a = await freshGateway();
    const b = await freshGateway();
    const client = await connectGateway(t.mqttPort, a.gatewayId, a.token);
    const own = await client.subscribeAsync(topicFor(a.gatewayId, 'cmd'), { qos: 1 });
    expect(own[0]!.qos).toBe(1);
    for (const topic of [topicFor(b.gatewayId, 'cmd'), 'fringewise/v1/+/counts', '#', '$SYS/#']) {
      // mqtt.js rejects the call on a refused topic; the SUBACK is on the error (stack notes, trap 6).
      const err = (await client.subscribeAsync(topic, { qos: 1 }).catch((e: unknown) => e)) as { packet?: { granted?: number[] } };
      expect(err.packet?.granted).toEqual([128]);
    }
    expect(client.connected).toBe(true);
    await until(async () => (await health(a.gatewayId)).refused === 4, 5_000, 'refusals counted');
    await client.endAsync();
  });
});

describe('status, commands and resume', () => {
  it('stores retained status, announces channels, and turns offline by last will', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    const status = { v: 1, state: 'online', boot: 'b1', channels: ['a', 'b', 'h'], scan: { min: 0, max: 100, unit: 'V' }, software: 'test 1' };
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token, {
      will: { topic: topicFor(gw.gatewayId, 'status'), payload: Buffer.from(JSON.stringify({ ...status, state: 'offline' })), qos: 1, retain: true },
    });
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify(status), { qos: 1, retain: true });
    expect(await ws.next((m) => m.type === 'status' && m.state === 'online')).toMatchObject({ gateway: gw.gatewayId, channels: ['a', 'b', 'h'] });
    const chs = await getDb().select().from(channels).where(eq(channels.gatewayId, gw.gatewayId));
    expect(chs).toHaveLength(3);
    client.stream.destroy(); // abrupt loss: the broker publishes the will
    await ws.next((m) => m.type === 'status' && m.state === 'offline');
    const [row] = await getDb().select().from(gateways).where(eq(gateways.id, gw.gatewayId));
    expect(row!.status).toMatchObject({ state: 'offline' });
    expect(row!.lastSeenAt).not.toBeNull();
    ws.ws.close();
  });

  it('tells a status socket the status and alarms of each bench it names, and no counts', async () => {
    const a = await freshGateway();
    const b = await freshGateway();
    const other = await freshGateway();
    const watch = await openStatusWatch(t.baseUrl, [a.benchId, b.benchId], observerToken);
    const benchSocket = await openLive(t.baseUrl, a.benchId, observerToken);
    const ga = await connectGateway(t.mqttPort, a.gatewayId, a.token);
    const gb = await connectGateway(t.mqttPort, b.gatewayId, b.token);
    const go = await connectGateway(t.mqttPort, other.gatewayId, other.token);
    await go.publishAsync(topicFor(other.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online' }), { qos: 1, retain: true });
    await publishBatch(ga, a.gatewayId, makeBatch(BASE, 10, 0));
    await ga.publishAsync(topicFor(a.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', channels: ['a', 'b'] }), { qos: 1, retain: true });
    await gb.publishAsync(topicFor(b.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'offline' }), { qos: 1, retain: true });
    expect(await watch.next((m) => m.type === 'status' && m.gateway === a.gatewayId)).toMatchObject({ bench: a.benchId, state: 'online', channels: ['a', 'b'] });
    expect(await watch.next((m) => m.type === 'status' && m.gateway === b.gatewayId)).toMatchObject({ bench: b.benchId, state: 'offline' });
    // The batch's frame went to every socket of the bench before the bench's own socket read it;
    // a status sent after that reaches the status socket behind anything that frame gave it.
    await benchSocket.next((m) => m.type === 'counts');
    await gb.publishAsync(topicFor(b.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online' }), { qos: 1, retain: true });
    await watch.next((m) => m.type === 'status' && m.gateway === b.gatewayId && m.state === 'online');
    expect(watch.messages.map((m) => m.type === 'status' && `${m.gateway} ${m.state}`)).toEqual([`${a.gatewayId} online`, `${b.gatewayId} offline`, `${b.gatewayId} online`]);
    // Alarms too (rare): the overview's banner follows them on this socket, and no other bench's.
    t.live.hub.publish(other.benchId, { type: 'alarm', bench: other.benchId, change: 'raised', event: {} });
    t.live.hub.publish(b.benchId, { type: 'alarm', bench: b.benchId, change: 'raised', event: {} });
    expect(await watch.next((m) => (m as { type: string }).type === 'alarm')).toMatchObject({ bench: b.benchId, change: 'raised' });
    // Nothing to resume on it.
    watch.ws.send(JSON.stringify({ type: 'resume', since: BASE }));
    expect(await watch.next((m) => m.type === 'error')).toMatchObject({ error: 'a status socket takes no messages' });
    for (const c of [ga, gb, go]) await c.endAsync();
    watch.ws.close();
    benchSocket.ws.close();
  });

  it('tells a status socket for all benches the presence, figures and status of each bench the user may read, and no counts or fits', async () => {
    const a = await freshGateway();
    const b = await freshGateway();
    const readable = (await listBenches()).map((x) => x.id);
    const watch = await openLiveQuery(t.baseUrl, 'watch=status&all=1', observerToken);
    const benchSocket = await openLive(t.baseUrl, a.benchId, observerToken);
    const ga = await connectGateway(t.mqttPort, a.gatewayId, a.token);
    await publishBatch(ga, a.gatewayId, makeBatch(BASE, 10, 0));
    await benchSocket.next((m) => m.type === 'counts');
    t.live.hub.publish(a.benchId, { type: 'sweep', bench: a.benchId, sweep: {} });
    t.live.hub.publish(a.benchId, { type: 'figures', bench: a.benchId, figures: { at: 1 } });
    t.live.hub.publish(b.benchId, { type: 'figures', bench: b.benchId, figures: { at: 2 } });
    await ga.publishAsync(topicFor(a.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online' }), { qos: 1, retain: true });
    await watch.next((m) => m.type === 'status' && m.gateway === a.gatewayId);
    // First where every bench's gateways stand, then what came since, in order (held while that was read).
    const presence = watch.messages.filter((m) => m.type === 'presence');
    expect(watch.messages.slice(0, presence.length)).toEqual(presence);
    expect(presence.map((m) => m.bench).sort()).toEqual(readable.sort());
    expect(presence.find((m) => m.bench === a.benchId)).toEqual({ type: 'presence', bench: a.benchId, gateways: [{ id: a.gatewayId, online: false }] });
    const after = watch.messages.slice(presence.length);
    expect(after.map((m) => `${m.type} ${(m as { bench: string }).bench}`)).toEqual([`figures ${a.benchId}`, `figures ${b.benchId}`, `status ${a.benchId}`]);
    await ga.endAsync();
    watch.ws.close();
    benchSocket.ws.close();
  });

  it('takes up on a status socket for all benches a bench made after it opened: its presence first, then its messages; never a bench that does not exist', async () => {
    const watch = await openLiveQuery(t.baseUrl, 'watch=status&all=1', observerToken);
    const opened = (await listBenches()).map((x) => x.id);
    await until(() => watch.messages.filter((m) => m.type === 'presence').length === opened.length, 10_000, 'the opening presence');
    const late = await freshGateway();
    // A bench id that names no bench (a publish the hub must not pass on to anyone) beside it.
    t.live.hub.publish('no-such-bench', { type: 'figures', bench: 'no-such-bench', figures: { at: 1 } });
    const gl = await connectGateway(t.mqttPort, late.gatewayId, late.token);
    await gl.publishAsync(topicFor(late.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online' }), { qos: 1, retain: true });
    await watch.next((m) => m.type === 'status' && m.gateway === late.gatewayId);
    t.live.hub.publish(late.benchId, { type: 'figures', bench: late.benchId, figures: { at: 3 } });
    await watch.next((m) => (m as { type: string }).type === 'figures' && (m as { bench?: string }).bench === late.benchId);
    const ofLate = watch.messages.filter((m) => (m as { bench?: string }).bench === late.benchId);
    expect(ofLate.map((m) => m.type)).toEqual(['presence', 'status', 'figures']);
    // Read when its first message came, the gateway is there; the status after it says online.
    expect(ofLate[0]).toMatchObject({ type: 'presence', bench: late.benchId, gateways: [{ id: late.gatewayId }] });
    expect(ofLate[1]).toMatchObject({ type: 'status', gateway: late.gatewayId, state: 'online' });
    expect(watch.messages.some((m) => (m as { bench?: string }).bench === 'no-such-bench')).toBe(false);
    await gl.endAsync();
    watch.ws.close();
  });

  it('refuses a status socket for a missing bench, without benches, for too many, or watching something else', async () => {
    const gw = await freshGateway();
    await expect(openStatusWatch(t.baseUrl, [gw.benchId, 'no-such-bench'], observerToken)).rejects.toThrow(/403/);
    await expect(openStatusWatch(t.baseUrl, [], observerToken)).rejects.toThrow(/400/);
    await expect(openStatusWatch(t.baseUrl, Array.from({ length: 101 }, (_, i) => `b-${i}`), observerToken)).rejects.toThrow(/400/);
    await expect(openStatusWatch(t.baseUrl, [gw.benchId], 'fwp_nope')).rejects.toThrow(/401/);
    await expect(openLiveQuery(t.baseUrl, `watch=counts&bench=${gw.benchId}`, observerToken)).rejects.toThrow(/400/);
    await expect(openLiveQuery(t.baseUrl, `watch=status&all=1&bench=${gw.benchId}`, observerToken)).rejects.toThrow(/400/);
    await expect(openLiveQuery(t.baseUrl, `all=1&bench=${gw.benchId}`, observerToken)).rejects.toThrow(/400/);
    await expect(openLiveQuery(t.baseUrl, 'watch=status&all=yes', observerToken)).rejects.toThrow(/400/);
    await expect(openLiveQuery(t.baseUrl, 'watch=status&all=1', 'fwp_nope')).rejects.toThrow(/401/);
  });

  it('sends a command and pushes its ack to the bench', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await client.subscribeAsync(topicFor(gw.gatewayId, 'cmd'), { qos: 1 });
    client.on('message', (_topic, payload) => {
      const cmd = JSON.parse(String(payload)) as { id: string };
      void client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id: cmd.id, ok: true }), { qos: 1 });
    });
    const ack = await t.live.commands.send(gw.gatewayId, { v: 1, id: 'cmd-1', op: 'stop' });
    expect(ack).toEqual({ v: 1, id: 'cmd-1', ok: true });
    expect(await ws.next((m) => m.type === 'ack')).toEqual({ type: 'ack', bench: gw.benchId, gateway: gw.gatewayId, id: 'cmd-1', ok: true });
    await client.endAsync();
    ws.ws.close();
  });

  it('answers resume with what was stored since a time', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    for (let i = 0; i < 5; i++) await publishBatch(client, gw.gatewayId, makeBatch(BASE + i * 1000, 100, i));
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    ws.ws.send(JSON.stringify({ type: 'resume', since: BASE + 2500 }));
    const done = await ws.next((m) => m.type === 'resumed');
    expect(done).toMatchObject({ since: BASE + 2500, until: BASE + 5000, batches: 3, complete: true });
    // Contiguous batches may arrive merged into fewer messages (the outbox coalesces).
    const got = ws.messages.filter((m): m is CountsMessage => m.type === 'counts');
    expect(got[0]!.t0).toBe(BASE + 2000);
    expect(got.reduce((n, m) => n + m.ch['a']!.length, 0)).toBe(300);
    ws.ws.send('{"type":"resume","since":-1}');
    expect(await ws.next((m) => m.type === 'error')).toMatchObject({ type: 'error' });
    await client.endAsync();
    ws.ws.close();
  });

  it('replays rows that joined a burst of batches, every bin once, each row within a batch\'s size', async () => {
    const gw = await freshGateway();
    const base = BASE - 1_800_000;
    // 40 contiguous batches of 100 bins × 4 channels submitted together: they share a write and join into rows.
    const writer = new BatchWriter(() => undefined);
    const keys = ['a', 'b', 'c', 'd'];
    await Promise.all(Array.from({ length: 40 }, (_, i) => writer.submit(gw.gatewayId, makeBatch(base + i * 1000, 100, i, { keys }))));
    const { rows } = await getDbHandle().pool.query<{ n: number }>('select n from count_batches where gateway_id = $1', [gw.gatewayId]);
    expect(rows.length).toBeLessThan(40);
    expect(rows.reduce((sum, r) => sum + r.n, 0)).toBe(4000);
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    ws.ws.send(JSON.stringify({ type: 'resume', since: base }));
    const done = await ws.next((m) => m.type === 'resumed', 30_000);
    expect(done).toMatchObject({ complete: true, batches: rows.length, until: base + 40_000 });
    const counts = ws.messages.filter((m): m is CountsMessage => m.type === 'counts');
    const starts = counts.flatMap((m) => Array.from({ length: m.ch['a']!.length }, (_, j) => m.t0 + j * m.dt));
    expect(new Set(starts).size).toBe(4000);
    expect(starts.length).toBe(4000);
    // A batch may be 256 KiB (the contract): a replayed row's message stays within that.
    for (const m of counts) expect(JSON.stringify(m).length).toBeLessThan(256 * 1024);
    ws.ws.close();
  });

  it('replays a gap of many pages once each, in time order, with live batches arriving meanwhile', async () => {
    const g1 = await freshGateway();
    const g2 = await freshGateway(g1.benchId);
    const base = BASE - 3_600_000;
    // 700 batches per gateway, both on the same starts (1 s each): 1,400 to replay, seven pages,
    // more than a client's queue holds at once.
    const writer = new BatchWriter(() => undefined);
    for (let i = 0; i < 700; i += 100) {
      await Promise.all(
        [g1, g2].flatMap((g) => Array.from({ length: 100 }, (_, k) => writer.submit(g.gatewayId, makeBatch(base + (i + k) * 1000, 100, i + k)))),
      );
    }
    const ws = await openLive(t.baseUrl, g1.benchId, observerToken);
    const client = await connectGateway(t.mqttPort, g1.gatewayId, g1.token);
    ws.ws.send(JSON.stringify({ type: 'resume', since: base }));
    // Live batches of g1 while the replay runs: each must reach the client once, after the replay's.
    for (let i = 700; i < 710; i++) await publishBatch(client, g1.gatewayId, makeBatch(base + i * 1000, 100, i));
    const done = (await ws.next((m) => m.type === 'resumed', 30_000)) as Extract<LiveMessage, { type: 'resumed' }>;
    expect(done.complete).toBe(true);
    await until(() => ws.messages.filter((m) => m.type === 'counts' && m.gateway === g1.gatewayId).reduce((n, m) => n + (m as CountsMessage).ch['a']!.length, 0) >= 710 * 100, 10_000, 'the live batches after the replay');
    expect(ws.messages.some((m) => m.type === 'dropped')).toBe(false);
    for (const [g, batches] of [[g1, 710], [g2, 700]] as const) {
      const mine = ws.messages.filter((m): m is CountsMessage => m.type === 'counts' && m.gateway === g.gatewayId);
      // Every bin exactly once, contiguous and in order (merged messages allowed).
      let next = base;
      for (const m of mine) {
        expect(m.t0).toBe(next);
        next = m.t0 + m.ch['a']!.length * m.dt;
      }
      expect(next).toBe(base + batches * 1000);
    }
    await client.endAsync();
    ws.ws.close();
  });

  it('replays large batches in pages that fit the client queue, and leaves imported runs out', async () => {
    const gw = await freshGateway();
    const base = BASE - 7_200_000;
    // 300 batches of 1,000 bins × 4 channels (~24 kB each as JSON): 200 of them would overflow a
    // client's 2 MiB queue, so pages are cut by bytes too. A bin apart, so each stays its own row.
    const writer = new BatchWriter(() => undefined);
    const keys = ['a', 'b', 'c', 'd'];
    await Promise.all(Array.from({ length: 300 }, (_, i) => writer.submit(gw.gatewayId, makeBatch(base + i * 10_010, 1000, i, { keys, value: (_k, j) => 1000 + j }))));
    // An imported run's pseudo-gateway on the same bench: history, not part of a live replay.
    const imported = `imp-${gw.gatewayId.slice(-30)}`;
    await getDb().insert(gateways).values({ id: imported, benchId: gw.benchId });
    expect((await writer.submit(imported, makeBatch(base, 10, 0))).kind).toBe('stored');
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    ws.ws.send(JSON.stringify({ type: 'resume', since: base }));
    const done = (await ws.next((m) => m.type === 'resumed', 30_000)) as Extract<LiveMessage, { type: 'resumed' }>;
    expect(done).toMatchObject({ complete: true, batches: 300 });
    expect(ws.messages.some((m) => m.type === 'dropped')).toBe(false);
    const counts = ws.messages.filter((m): m is CountsMessage => m.type === 'counts');
    expect(new Set(counts.map((m) => m.gateway))).toEqual(new Set([gw.gatewayId]));
    expect(counts.reduce((n, m) => n + m.ch['a']!.length, 0)).toBe(300 * 1000);
    ws.ws.close();
  });

  it('reads each page after the cursor as one primary-key range per gateway', async () => {
    const gw = await freshGateway();
    const client = await getDbHandle().pool.connect();
    try {
      await client.query('begin');
      // Small tables would be scanned anyway; with scans priced out, the plan shows whether t0 is an index bound.
      await client.query('set local enable_seqscan = off');
      const { rows } = await client.query<{ 'QUERY PLAN': string }>(`explain ${NEXT_PAGE_SQL}`, [gw.benchId, BASE, gw.gatewayId, 200, 'imp-', BASE]);
      const plan = rows.map((r) => r['QUERY PLAN']).join('\n');
      expect(plan).toMatch(/Index Cond: \(\(gateway_id = g\.id\) AND \(t0 >= CASE/);
      await client.query('rollback');
    } finally {
      client.release();
    }
  });

  it('refuses a live socket without auth or for a missing bench', async () => {
    const gw = await freshGateway();
    await expect(openLive(t.baseUrl, gw.benchId, 'fwp_nope')).rejects.toThrow(/401/);
    await expect(openLive(t.baseUrl, 'no-such-bench', observerToken)).rejects.toThrow(/403/);
  });
});
