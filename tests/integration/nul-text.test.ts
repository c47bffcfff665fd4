// Text with U+0000, which PostgreSQL's text and jsonb cannot hold, or a lone surrogate, which
// jsonb refuses, in every message a gateway sends: each is refused whole by the contract, counted on the gateway's health with its reason,
// and nothing of it is stored or relayed. A batch that still fails in the write is counted too.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { countBatches, gatewayHealth, gateways } from '../../src/lib/server/db/schema.ts';
import { BatchWriter } from '../../src/lib/server/ingest/store.ts';
import { connectGateway, freshGateway, makeBatch, openLive, startTestLive, until, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

let t: TestLive;
let observerToken: string;
const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 600_000;

beforeAll(async () => {
  t = await startTestLive();
  observerToken = (await userWithToken('observer')).token;
});
afterAll(async () => {
  await t.close();
});

async function health(gatewayId: string) {
  const [h] = await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gatewayId));
  return h;
}

const reasons = (h: Awaited<ReturnType<typeof health>>) => ((h?.lastRejects ?? []) as { reason: string }[]).map((r) => r.reason);

describe('NUL characters from a gateway', () => {
  it('refuses and counts a count batch, a status and an ack holding one', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify({ ...makeBatch(BASE, 10, 0), boot: 'a\u0000b' }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', software: 'gw\u0000 1.0' }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', scan: { min: 0, max: 1, unit: 'V\u0000' } }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id: 'c1', ok: false, error: 'bad\u0000' }), { qos: 1 });
    // A key with NUL: refused by the key rule, and its reason (which names the key) is still stored.
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify({ ...makeBatch(BASE, 10, 1), ch: { 'a\u0000': [1] } }), { qos: 1 });

    await until(async () => (await health(gw.gatewayId))?.rejected === 5, 10_000, 'five rejects counted');
    const h = await health(gw.gatewayId);
    expect(h?.accepted).toBe(0);
    expect(reasons(h)).toEqual([
      'counts: ch.a\\u0000: bad channel key "a\\u0000"',
      'ack: error: must not contain the NUL character (U+0000)',
      'status: scan.unit: must not contain the NUL character (U+0000)',
      'status: software: must not contain the NUL character (U+0000)',
      'counts: boot: must not contain the NUL character (U+0000)',
    ]);
    expect(await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toEqual([]);
    const [row] = await getDb().select({ status: gateways.status }).from(gateways).where(eq(gateways.id, gw.gatewayId));
    expect(row?.status ?? null).toBeNull();
    expect(ws.messages.filter((m) => m.type === 'ack' || m.type === 'status')).toEqual([]);
    await client.endAsync();
    ws.ws.close();
  });

  it('refuses and counts a status, an ack and a count batch holding a lone surrogate', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    // JSON.stringify writes a lone surrogate as the escape "\ud800": valid UTF-8 and valid JSON.
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', software: 'gw \ud800' }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id: 'c1', ok: false, error: 'bad \udc00' }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify({ ...makeBatch(BASE, 10, 0), boot: 'b\ud83d' }), { qos: 1 });
    await until(async () => (await health(gw.gatewayId))?.rejected === 3, 10_000, 'three rejects counted');
    const lone = 'must not contain a lone surrogate (\\ud800–\\udfff without its pair)';
    expect(reasons(await health(gw.gatewayId))).toEqual([`counts: boot: ${lone}`, `ack: error: ${lone}`, `status: software: ${lone}`]);
    const [row] = await getDb().select({ status: gateways.status }).from(gateways).where(eq(gateways.id, gw.gatewayId));
    expect(row?.status ?? null).toBeNull();
    expect(await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toEqual([]);
    await client.endAsync();
  });

  it('counts batches whose reason would hold a lone surrogate (a key\'s own, or a pair cut by the reason\'s cap)', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify({ ...makeBatch(BASE, 10, 0), ch: { '\ud800': [1] } }), { qos: 1 });
    await client.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify({ ...makeBatch(BASE, 10, 1), ch: { [`${'a'.repeat(19)}\u{1F600}`]: [1] } }), { qos: 1 });
    await until(async () => (await health(gw.gatewayId))?.rejected === 2, 10_000, 'two rejects counted');
    expect(reasons(await health(gw.gatewayId))).toEqual([`counts: ch.${'a'.repeat(19)}\u{1F600}: bad channel key "${'a'.repeat(19)}\uFFFD"`, 'counts: ch.\uFFFD: bad channel key "\uFFFD"']);
    expect(await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toEqual([]);
    await client.endAsync();
  });

  it('counts a batch the write itself refuses as rejected, with the database\'s reason', async () => {
    const gw = await freshGateway();
    const writer = new BatchWriter(() => undefined);
    // Past the contract (as a bug in it would let through): the write fails on the NUL.
    const outcome = await writer.submit(gw.gatewayId, { ...makeBatch(BASE, 10, 0), boot: 'a\u0000b' });
    expect(outcome).toMatchObject({ kind: 'rejected', reason: expect.stringMatching(/^could not be stored: /) });
    const h = await health(gw.gatewayId);
    expect(h?.rejected).toBe(1);
    expect(reasons(h)[0]).toMatch(/^could not be stored: /);
    expect(await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toEqual([]);
    // The writer goes on: the gateway's next good batch is stored.
    expect(await writer.submit(gw.gatewayId, makeBatch(BASE, 10, 1))).toMatchObject({ kind: 'stored' });
  });
});
