// Items of the wire contract (shared/contract.md) that no other test holds to the letter, checked
// against the real broker, database, API and WebSocket: messages the contract allows are taken
// whole, and what the script API answers has the contract's shape.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { gateways } from '../../src/lib/server/db/schema.ts';
import { buildIfStale } from '../../src/server/build.ts';
import { connectGateway, freshGateway, openLive, startTestLive, type TestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

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
