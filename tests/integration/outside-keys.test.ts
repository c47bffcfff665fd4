// Channel keys that are also names on Object.prototype ("__proto__", "constructor", and the
// camel-case ones the contract's key rule refuses) through ingest → store → WebSocket (live and
// resume) → gateway health, API and page. Such a key must stay a plain channel everywhere and
// never reach Object.prototype, which would break every page of the server.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import type { CountsMessage, LiveMessage } from '../../src/lib/live-messages.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { channels, gatewayHealth } from '../../src/lib/server/db/schema.ts';
import { connectGateway, freshGateway, openLive, startTestLive, until, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

let t: TestLive;
let observerToken: string;
// Twenty seconds ago, on a second boundary: inside the health page's rate window.
const BASE = Math.floor(Date.now() / 1000) * 1000 - 20_000;

beforeAll(async () => {
  t = await startTestLive({ web: true });
  observerToken = (await userWithToken('observer')).token;
});
afterAll(async () => {
  await t.close();
});

/** A count batch written as text: a JSON object literal with "__proto__" cannot be built with `{}` and assignment. */
function batchText(seq: number, t0: number, keys: string[], n: number): string {
  const ch = keys.map((k, i) => `"${k}":[${Array.from({ length: n }, (_, j) => 10 * (i + 1) + j).join(',')}]`).join(',');
  return `{"v":1,"boot":"keys","seq":${seq},"t0":${t0},"dt":10,"ch":{${ch}}}`;
}

/** The channel arrays of the count messages seen, joined per key in time order (own keys only). */
function joined(messages: LiveMessage[]): Map<string, number[]> {
  const out = new Map<string, number[]>();
  for (const m of messages.filter((m): m is CountsMessage => m.type === 'counts').sort((a, b) => a.t0 - b.t0)) {
    for (const [k, v] of Object.entries(m.ch)) out.set(k, [...(out.get(k) ?? []), ...v]);
  }
  return out;
}

const KEYS = ['__proto__', 'constructor', 'a'];
const expected = new Map(KEYS.map((k, i) => [k, [...Array.from({ length: 5 }, (_, j) => 10 * (i + 1) + j), ...Array.from({ length: 5 }, (_, j) => 10 * (i + 1) + j)]]));

describe('channel keys named like Object.prototype properties', () => {
  it('are stored, pushed, replayed and shown like any other key', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observerToken);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    // Two contiguous batches, published back to back so the hub may merge them into one message.
    await Promise.all([
      client.publishAsync(topicFor(gw.gatewayId, 'counts'), batchText(0, BASE, KEYS, 5), { qos: 1 }),
      client.publishAsync(topicFor(gw.gatewayId, 'counts'), batchText(1, BASE + 50, KEYS, 5), { qos: 1 }),
    ]);
    await until(() => joined(ws.messages).get('a')?.length === 10, 10_000, 'both batches pushed');
    expect(joined(ws.messages)).toEqual(expected);
    for (const m of ws.messages.filter((m): m is CountsMessage => m.type === 'counts')) expect(Object.keys(m.ch).sort()).toEqual([...KEYS].sort());

    const stored = await getDb().select({ key: channels.key }).from(channels).where(eq(channels.gatewayId, gw.gatewayId));
    expect(stored.map((c) => c.key).sort()).toEqual([...KEYS].sort());

    // A reconnecting client's replay carries the same channels.
    const again = await openLive(t.baseUrl, gw.benchId, observerToken);
    again.ws.send(JSON.stringify({ type: 'resume', since: BASE }));
    await again.next((m) => m.type === 'resumed');
    expect(joined(again.messages)).toEqual(expected);

    // Health: a rate per channel, "constructor" included, in the API and on the page.
    const api = await fetch(`${t.baseUrl}/api/v1/gateways/${gw.gatewayId}/health`, { headers: { authorization: `Bearer ${observerToken}` } });
    expect(api.status).toBe(200);
    const health = (await api.json()) as { rates: { countsPerSecond: Record<string, number> } };
    expect(Object.keys(health.rates.countsPerSecond).sort()).toEqual([...KEYS].sort());
    for (const k of KEYS) expect(typeof health.rates.countsPerSecond[k]).toBe('number');
    const page = await fetch(`${t.baseUrl}/benches/${gw.benchId}/gateways/${gw.gatewayId}`, { headers: { authorization: `Bearer ${observerToken}` } });
    expect(page.status).toBe(200);
    const html = await page.text();
    for (const k of KEYS) expect(html).toContain(`Channel ${k}`);

    // Nothing reached Object.prototype, and other pages still render.
    expect(Object.keys(Object.prototype)).toEqual([]);
    expect(({} as Record<string, unknown>)['a']).toBeUndefined();
    expect((await fetch(`${t.baseUrl}/benches/${gw.benchId}`, { headers: { authorization: `Bearer ${observerToken}` } })).status).toBe(200);

    await client.endAsync();
    ws.ws.close();
    again.ws.close();
  });

  it('refuses the camel-case ones the key rule excludes, and counts them', async () => {
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    for (const [seq, key] of ['hasOwnProperty', 'toString'].entries()) {
      await client.publishAsync(topicFor(gw.gatewayId, 'counts'), batchText(seq, BASE + seq * 50, [key, 'a'], 5), { qos: 1 });
    }
    const [h] = await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gw.gatewayId));
    expect(h?.rejected).toBe(2);
    expect(h?.accepted ?? 0).toBe(0);
    expect((h?.lastRejects as { reason: string }[]).map((r) => r.reason).join('\n')).toMatch(/bad channel key "hasOwnProperty"/);
    expect(Object.keys(Object.prototype)).toEqual([]);
    await client.endAsync();
  });
});
