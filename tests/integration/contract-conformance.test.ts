// Items of the wire contract (shared/contract.md) that no other test holds to the letter, checked
// against the real broker, database, API and WebSocket: messages the contract allows are taken
// whole, and what the script API answers has the contract's shape.
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import { eq } from 'drizzle-orm';
import mqtt from 'mqtt';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { countBatches, gatewayHealth, gateways } from '../../src/lib/server/db/schema.ts';
import { revokeGateway } from '../../src/lib/server/provisioning.ts';
import { buildIfStale } from '../../src/server/build.ts';
import { connectGateway, freshGateway, makeBatch, openLive, publishBatch, startTestLive, until, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

const run = promisify(execFile);

let t: TestLive;
let observer: string;

beforeAll(async () => {
  buildIfStale();
  t = await startTestLive({ web: true });
  observer = (await userWithToken('observer')).token;
});
afterAll(async () => {
  await t.close();
});

describe('status and ack text the contract sets no length for', () => {
  it('keeps a long software name and a long command error, cut, instead of refusing the message', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observer);
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const software = `bench gateway 2.3.1 (${'f'.repeat(200)})`;
    await client.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', software }), { qos: 1, retain: true });
    expect(await ws.next((m) => m.type === 'status')).toMatchObject({ state: 'online', software: software.slice(0, 99) + '…' });
    const [row] = await getDb().select({ status: gateways.status }).from(gateways).where(eq(gateways.id, gw.gatewayId));
    expect(row?.status).toMatchObject({ state: 'online' });

    await client.subscribeAsync(topicFor(gw.gatewayId, 'cmd'), { qos: 1 });
    const error = `piezo driver fault: ${'register dump '.repeat(200)}`;
    client.on('message', (_topic, payload) => {
      const cmd = JSON.parse(String(payload)) as { id: string };
      void client.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id: cmd.id, ok: false, error }), { qos: 1 });
    });
    const ack = await t.live.commands.send(gw.gatewayId, { v: 1, id: `long-error-${gw.gatewayId}`, op: 'stop' });
    expect(ack).toEqual({ v: 1, id: `long-error-${gw.gatewayId}`, ok: false, error: error.slice(0, 999) + '…' });
    expect(await ws.next((m) => m.type === 'ack')).toMatchObject({ ok: false, error: error.slice(0, 999) + '…' });
    await client.endAsync();
    ws.ws.close();
  });
});

describe('GET /api/v1/benches', () => {
  const get = (path: string) => fetch(`${t.baseUrl}${path}`, { headers: { authorization: `Bearer ${observer}` } });
  type Listed = { id: string; name: string; wavelengthNm: number; channels: { gateway: string; key: string; label: string; role: string }[] };
  const listed = async (id: string) => ((await (await get('/api/v1/benches')).json()) as Listed[]).find((b) => b.id === id);

  it('lists each bench with its channels; until roles are set, the first gateway\'s first two keys in sorted order are the outputs', async () => {
    const first = await freshGateway();
    const second = await freshGateway(first.benchId);
    const c1 = await connectGateway(t.mqttPort, first.gatewayId, first.token);
    await c1.publishAsync(topicFor(first.gatewayId, 'status'), JSON.stringify({ v: 1, state: 'online', channels: ['z', 'm', 'b'] }), { qos: 1, retain: true });
    // The later gateway reports first, and with a key that sorts before all of the first one's.
    const c2 = await connectGateway(t.mqttPort, second.gatewayId, second.token);
    await publishBatch(c2, second.gatewayId, makeBatch(Math.floor(Date.now() / 1000) * 1000 - 600_000, 10, 0, { keys: ['a'] }));
    await until(async () => (await listed(first.benchId))?.channels.length === 4, 10_000, 'four channels listed');
    const bench = await listed(first.benchId);
    expect(bench).toEqual({ id: first.benchId, name: 'Test bench', wavelengthNm: 810, description: expect.any(String), channels: expect.any(Array) });
    const roles = Object.fromEntries(bench!.channels.map((c) => [`${c.gateway}/${c.key}`, c.role]));
    expect(roles).toEqual({ [`${first.gatewayId}/b`]: 'out_a', [`${first.gatewayId}/m`]: 'out_b', [`${first.gatewayId}/z`]: 'aux', [`${second.gatewayId}/a`]: 'aux' });
    expect(bench!.channels.find((c) => c.key === 'm')).toEqual({ gateway: first.gatewayId, key: 'm', label: 'm', role: 'out_b' });
    await c1.endAsync();
    await c2.endAsync();
  });
});

describe('GET /api/v1/benches/{id}/counts?format=csv', () => {
  it('answers the contract\'s CSV: # metadata lines, then t_ms, <gateway>/<key> columns, x and cc, one row per bin', async () => {
    const gw = await freshGateway();
    const c = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const t0 = Math.floor(Date.now() / 60_000) * 60_000 - 600_000;
    await publishBatch(c, gw.gatewayId, { ...makeBatch(t0, 3, 0, { value: (k, i) => (k === 'a' ? 400 + i : 9 + i) }), x: [12, 12.05, 12.1], cc: [0, 1, 0] });
    await c.endAsync();
    const url = `${t.baseUrl}/api/v1/benches/${gw.benchId}/counts?from=${t0}&to=${t0 + 30}&step=10&format=csv`;
    const res = await fetch(url, { headers: { authorization: `Bearer ${observer}`, accept: 'application/json' } });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
    const lines = (await res.text()).trim().split('\n');
    const body = lines.filter((l) => !l.startsWith('#'));
    expect(lines.findIndex((l) => !l.startsWith('#'))).toBeGreaterThan(0);
    expect(body).toEqual([`t_ms,${gw.gatewayId}/a,${gw.gatewayId}/b,x,cc`, `${t0},400,9,12,0`, `${t0 + 10},401,10,12.05,1`, `${t0 + 20},402,11,12.1,0`]);
    // `format` wins over Accept either way.
    const json = await fetch(url.replace('format=csv', 'format=json'), { headers: { authorization: `Bearer ${observer}`, accept: 'text/csv' } });
    expect(await json.json()).toMatchObject({ t0, step: 10, channels: { [`${gw.gatewayId}/a`]: [400, 401, 402] }, x: [12, 12.05, 12.1] });
  });
});

describe('MQTT 5 on the embedded broker', () => {
  const connect5 = (gatewayId: string, token: string, extra: mqtt.IClientOptions = {}) =>
    mqtt.connectAsync(`mqtt://127.0.0.1:${t.mqttPort}`, { protocolVersion: 5, username: gatewayId, password: token, reconnectPeriod: 0, ...extra });
  const minuteAgo = () => Math.floor(Date.now() / 60_000) * 60_000 - 600_000;

  it('refuses a wrong token and a revoked gateway with the version 5 reason codes', async () => {
    const gw = await freshGateway();
    await expect(connect5(gw.gatewayId, 'fwg_wrong')).rejects.toMatchObject({ code: 0x86 });
    await revokeGateway(gw.gatewayId);
    await expect(connect5(gw.gatewayId, gw.token)).rejects.toMatchObject({ code: 0x87 });
  });

  it('takes status, counts and acks, sends commands, and refuses what the topic policy forbids', async () => {
    const gw = await freshGateway();
    const ws = await openLive(t.baseUrl, gw.benchId, observer);
    const status = { v: 1, state: 'online', boot: 'b5', channels: ['a', 'b'], scan: { min: 0, max: 100, unit: 'V' }, software: 'mqtt 5 gateway' };
    const will = { topic: topicFor(gw.gatewayId, 'status'), payload: Buffer.from(JSON.stringify({ ...status, state: 'offline' })), qos: 1 as const, retain: true };
    // No client id: MQTT 5 lets the server assign one (§3.1.3.1).
    const c = await connect5(gw.gatewayId, gw.token, { clientId: '', will, properties: { sessionExpiryInterval: 0 } });
    await c.publishAsync(topicFor(gw.gatewayId, 'status'), JSON.stringify(status), { qos: 1, retain: true, properties: { userProperties: { fw: '5' } } });
    expect(await ws.next((m) => m.type === 'status' && m.state === 'online')).toMatchObject({ gateway: gw.gatewayId, software: 'mqtt 5 gateway' });

    const t0 = minuteAgo();
    await c.publishAsync(topicFor(gw.gatewayId, 'counts'), JSON.stringify(makeBatch(t0, 3, 0)), { qos: 1, properties: { contentType: 'application/json' } });
    expect(await ws.next((m) => m.type === 'counts')).toMatchObject({ gateway: gw.gatewayId, t0, dt: 10 });
    expect(await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toHaveLength(1);

    expect(await c.subscribeAsync(topicFor(gw.gatewayId, 'cmd'), { qos: 1 })).toMatchObject([{ qos: 1 }]);
    // Another gateway's cmd: SUBACK "Not authorized" (mqtt.js rejects the call), the session goes on.
    await expect(c.subscribeAsync('fringewise/v1/+/cmd', { qos: 1 })).rejects.toThrow(/Not authorized/);
    c.on('message', (_topic, payload) => {
      const cmd = JSON.parse(String(payload)) as { id: string };
      void c.publishAsync(topicFor(gw.gatewayId, 'ack'), JSON.stringify({ v: 1, id: cmd.id, ok: true }), { qos: 1 });
    });
    const id = `v5-${gw.gatewayId}`;
    expect(await t.live.commands.send(gw.gatewayId, { v: 1, id, op: 'stop' })).toEqual({ v: 1, id, ok: true });
    expect(await ws.next((m) => m.type === 'ack')).toMatchObject({ id, ok: true });

    // "Disconnect with Will Message" (reason 0x04): the broker publishes the will.
    await c.endAsync(false, { reasonCode: 0x04 });
    await ws.next((m) => m.type === 'status' && m.state === 'offline');
    const [h] = await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gw.gatewayId));
    expect(h).toMatchObject({ accepted: 1, rejected: 0, refused: 1 });
    ws.ws.close();
  });

  it("takes a contract batch from Debian's mosquitto_pub speaking MQTT 5", async () => {
    const gw = await freshGateway();
    const t0 = minuteAgo();
    const batch = { v: 1, boot: '3f9c2a', seq: 1042, t0, dt: 10, ch: { a: [412, 398, 405], b: [9, 14, 11] }, x: [12.0, 12.05, 12.1], cc: [0, 1, 0] };
    await run('/usr/bin/mosquitto_pub', ['-h', '127.0.0.1', '-p', String(t.mqttPort), '-V', 'mqttv5', '-u', gw.gatewayId, '-P', gw.token, '-q', '1', '-t', topicFor(gw.gatewayId, 'counts'), '-m', JSON.stringify(batch)]);
    const [row] = await getDb().select().from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId));
    expect(row).toMatchObject({ t0, n: 3, boot: '3f9c2a', seq: 1042 });
    await expect(run('/usr/bin/mosquitto_pub', ['-h', '127.0.0.1', '-p', String(t.mqttPort), '-V', 'mqttv5', '-u', gw.gatewayId, '-P', 'fwg_wrong', '-t', topicFor(gw.gatewayId, 'counts'), '-m', '{}'])).rejects.toThrow();
  });
});

// Last in the file: a second live path takes over the process's runtime() services until it stops.
describe('MQTT_PREFIX', () => {
  const prefix = 'lab-7/fw';
  let other: TestLive;
  beforeAll(async () => {
    other = await startTestLive({ live: { prefix } });
  });
  afterAll(async () => {
    await other.close();
  });

  it('moves every topic under the configured prefix and refuses the default one', async () => {
    const gw = await freshGateway();
    const c = await connectGateway(other.mqttPort, gw.gatewayId, gw.token);
    const granted = await c.subscribeAsync(topicFor(gw.gatewayId, 'cmd', prefix), { qos: 1 });
    expect(granted[0]?.qos).toBe(1);
    const t0 = Math.floor(Date.now() / 60_000) * 60_000 - 600_000;
    await c.publishAsync(topicFor(gw.gatewayId, 'counts', prefix), JSON.stringify(makeBatch(t0, 10, 0)), { qos: 1 });
    const rows = await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId));
    expect(rows.map((r) => Number(r.t0))).toEqual([t0]);

    const received = new Promise<{ topic: string; id: string }>((resolve) => c.once('message', (topic, payload) => resolve({ topic, id: (JSON.parse(String(payload)) as { id: string }).id })));
    await other.live.commands.publish(gw.gatewayId, { v: 1, id: `prefixed-${gw.gatewayId}`, op: 'stop' });
    expect(await received).toEqual({ topic: topicFor(gw.gatewayId, 'cmd', prefix), id: `prefixed-${gw.gatewayId}` });

    // The default prefix is foreign here: refusing it closes the connection (3.1.1 has no negative PUBACK).
    c.publish(topicFor(gw.gatewayId, 'counts'), JSON.stringify(makeBatch(t0 + 100, 10, 1)), { qos: 1 });
    await until(async () => ((await getDb().select().from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gw.gatewayId)))[0]?.refused ?? 0) === 1, 10_000, 'the refusal counted');
    expect(await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw.gatewayId))).toHaveLength(1);
    await c.endAsync(true);
  });
});
