// Starts the live path in the test process (embedded broker on a free port, ingest, WebSocket hub)
// behind a bare HTTP server that only answers upgrades, or behind the real built web app when a
// test needs the API routes. Also makes fresh benches, gateways and MQTT/WebSocket clients.
import http from 'node:http';
import type { AddressInfo } from 'node:net';
import mqtt, { type MqttClient } from 'mqtt';
import WebSocket from 'ws';
import { topicFor, type CountBatch } from '../../src/lib/contract/wire.ts';
import type { LiveMessage } from '../../src/lib/live-messages.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { startWebServer } from '../../src/server/http.ts';
import { startLivePath, type LivePath, type LivePathOptions } from '../../src/server/live-path.ts';

export interface TestLive {
  live: LivePath;
  mqttPort: number;
  /** http://127.0.0.1:port of the server that answers the live upgrade (and the API with `web: true`). */
  baseUrl: string;
  close(): Promise<void>;
}

export async function startTestLive(opts: { web?: boolean; live?: Partial<LivePathOptions> } = {}): Promise<TestLive> {
  const live = await startLivePath({ mqttUrl: null, mqttHost: '127.0.0.1', mqttPort: 0, prefix: 'fringewise/v1', ...opts.live });
  let baseUrl: string;
  let closeWeb: () => Promise<void>;
  if (opts.web) {
    const web = await startWebServer({ port: 0, host: '127.0.0.1', upgrades: live.upgrades });
    baseUrl = web.url;
    closeWeb = () => web.close();
  } else {
    const server = http.createServer((_req, res) => res.writeHead(404).end());
    server.on('upgrade', (req, socket, head) => {
      const handler = live.upgrades[(req.url ?? '/').split('?')[0]!];
      if (handler) handler(req, socket, head);
      else socket.destroy();
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
    baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    closeWeb = () =>
      new Promise((r) => {
        server.closeAllConnections();
        server.close(() => r());
      });
  }
  return {
    live,
    mqttPort: live.transport.port ?? 0,
    baseUrl,
    close: async () => {
      await closeWeb();
      await live.close();
    },
  };
}

let serial = 0;
function uniqueId(tag: string): string {
  serial += 1;
  return `${tag}-${process.pid.toString(36)}-${Date.now().toString(36)}-${serial}`.slice(0, 40);
}

export async function freshGateway(benchId?: string): Promise<{ benchId: string; gatewayId: string; token: string }> {
  const bench = benchId ?? (await createBench({ id: uniqueId('b'), name: 'Test bench', wavelengthNm: 810 })).id;
  const gatewayId = uniqueId('g');
  const { token } = await createGateway(gatewayId, bench);
  return { benchId: bench, gatewayId, token };
}

export async function connectGateway(port: number, gatewayId: string, token: string, extra: mqtt.IClientOptions = {}): Promise<MqttClient> {
  return await mqtt.connectAsync(`mqtt://127.0.0.1:${port}`, { username: gatewayId, password: token, protocolVersion: 4, reconnectPeriod: 0, ...extra });
}

export function makeBatch(t0: number, n: number, seq: number, opts: { dt?: number; keys?: string[]; boot?: string; value?: (key: string, i: number) => number } = {}): CountBatch {
  const dt = opts.dt ?? 10;
  const ch: Record<string, number[]> = {};
  for (const k of opts.keys ?? ['a', 'b']) ch[k] = Array.from({ length: n }, (_, i) => opts.value?.(k, i) ?? (i % 50) + 1);
  return { v: 1, boot: opts.boot ?? 'boot1', seq, t0, dt, ch };
}

export async function publishBatch(client: MqttClient, gatewayId: string, batch: CountBatch): Promise<void> {
  await client.publishAsync(topicFor(gatewayId, 'counts'), JSON.stringify(batch), { qos: 1 });
}

export interface RecordingSocket {
  ws: WebSocket;
  messages: LiveMessage[];
  next(pred: (m: LiveMessage) => boolean, timeoutMs?: number): Promise<LiveMessage>;
}

/** A WebSocket on the live path that records every message it gets. */
export function openLive(baseUrl: string, benchId: string, token: string): Promise<RecordingSocket> {
  return openLiveQuery(baseUrl, `bench=${benchId}`, token);
}

/** A status-only socket on the live path for several benches (the lab overview's). */
export function openStatusWatch(baseUrl: string, benchIds: string[], token: string): Promise<RecordingSocket> {
  return openLiveQuery(baseUrl, ['watch=status', ...benchIds.map((b) => `bench=${b}`)].join('&'), token);
}

/** A socket on the live path with the query as given. */
export async function openLiveQuery(baseUrl: string, query: string, token: string): Promise<RecordingSocket> {
  const ws = new WebSocket(`${baseUrl.replace('http', 'ws')}/api/v1/live?${query}`, { headers: { authorization: `Bearer ${token}` } });
  const messages: LiveMessage[] = [];
  const waiters: { pred: (m: LiveMessage) => boolean; resolve: (m: LiveMessage) => void }[] = [];
  ws.on('message', (data) => {
    const m = JSON.parse(String(data)) as LiveMessage;
    messages.push(m);
    for (const w of [...waiters]) if (w.pred(m)) {
      waiters.splice(waiters.indexOf(w), 1);
      w.resolve(m);
    }
  });
  await new Promise<void>((resolve, reject) => {
    ws.once('open', () => resolve());
    ws.once('unexpected-response', (_req, res) => reject(new Error(`upgrade refused: ${res.statusCode}`)));
    ws.once('error', reject);
  });
  return {
    ws,
    messages,
    next: (pred, timeoutMs = 10_000) => {
      const seen = messages.find(pred);
      if (seen) return Promise.resolve(seen);
      return new Promise((resolve, reject) => {
        const t = setTimeout(() => reject(new Error('timed out waiting for a live message')), timeoutMs);
        waiters.push({ pred, resolve: (m) => (clearTimeout(t), resolve(m)) });
      });
    },
  };
}

export async function until(cond: () => Promise<boolean> | boolean, timeoutMs = 10_000, what = 'condition'): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (Date.now() < end) {
    if (await cond()) return;
    await new Promise((r) => setTimeout(r, 25));
  }
  throw new Error(`timed out waiting for ${what}`);
}

/** Waits until the rollup journal lists no row of the gateway: its rollups hold everything stored. */
export async function rolledUp(gatewayId: string, timeoutMs = 10_000): Promise<void> {
  await until(async () => (await getDbHandle().pool.query('select 1 from rollup_pending where gateway_id = $1 limit 1', [gatewayId])).rowCount === 0, timeoutMs, `rollups of ${gatewayId}`);
}
