// The load side of the ingest benchmark, forked by ingest.bench.ts into its own process: the
// gateways publish from this process's main thread and the 200 browsers receive in a worker thread.
// The server under test thus shares neither its event loop nor its process with its load, as in a
// lab where gateways and browsers are other machines (the 2 cores stay shared: see DEVELOPERS.md).
// The parent sends one command at a time over IPC; each gets one answer.
import net from 'node:net';
import { Worker } from 'node:worker_threads';
import mqtt, { type MqttClient } from 'mqtt';
import { topicFor } from '../../src/lib/contract/wire.ts';
import { BINS, BURST_MS, DT_MS, GATEWAYS, WINDOW, every, payload, sample, type LoadCommand, type LoadReply } from './ingest-common.ts';

const now = () => performance.timeOrigin + performance.now();

/**
 * The WebSocket clients, as plain JS for an eval worker. One thread receives for all 200 browsers
 * (40,000 messages/s), so it reads the gateway and t0 from the message head instead of parsing
 * ~3 KB of JSON each time; a message longer than one batch (merged by the server) is parsed whole,
 * and each batch in it counts. Per batch it keeps the arrival times of the first `timed` clients.
 */
/** Arrival times kept for the latency figures over a whole run. */
const MAX_LATENCY_SAMPLES = 2_000_000;

const WS_CLIENTS_WORKER = `
const { parentPort, workerData } = require('node:worker_threads');
const WebSocket = require(require.resolve('ws', { paths: [process.cwd()] }));
const now = () => performance.timeOrigin + performance.now();
const HEAD = /^{"type":"counts","bench":"[^"]*","gateway":"([^"]*)","t0":(\\d+),"dt":(\\d+)/;
// Arrival times go into typed arrays allocated once: growing a JS array per batch kept over a
// million numbers in this thread's heap, and its collections stalled the browsers' thread.
const when = new Float64Array(workerData.capacity);
const which = new Int32Array(workerData.capacity);
let recorded = 0;
let dropped = 0;
const batchIndex = new Map();
const batchKeys = [];
let oneBatchBytes = Infinity;
const arrived = (timed, key, t) => {
  if (!timed) return;
  if (recorded === when.length) return void dropped++;
  let k = batchIndex.get(key);
  if (k === undefined) {
    k = batchKeys.length;
    batchKeys.push(key);
    batchIndex.set(key, k);
  }
  when[recorded] = t;
  which[recorded++] = k;
};
let open = 0;
for (let i = 0; i < workerData.n; i++) {
  const timed = i < workerData.timed;
  // The browsers stand in for other machines: their UTF-8 check would cost this machine's cores, not the server's.
  const ws = new WebSocket(workerData.url, { headers: { authorization: 'Bearer ' + workerData.token }, skipUTF8Validation: true });
  ws.on('open', () => { ws._socket.setNoDelay(true); if (++open === workerData.n) parentPort.postMessage('ready'); });
  ws.on('message', (data) => {
    const t = now();
    const head = HEAD.exec(data.toString('latin1', 0, 200));
    if (!head) return;
    if (data.length < oneBatchBytes * 1.5) {
      oneBatchBytes = Math.min(oneBatchBytes, data.length);
      return arrived(timed, head[1] + '/' + head[2], t);
    }
    const m = JSON.parse(String(data));
    const n = Object.values(m.ch)[0].length;
    for (let j = 0; j < n; j += workerData.bins) arrived(timed, m.gateway + '/' + (m.t0 + j * m.dt), t);
  });
}
parentPort.on('message', () => {
  const lists = batchKeys.map(() => []);
  for (let j = 0; j < recorded; j++) lists[which[j]].push(when[j]);
  parentPort.postMessage({ arrivals: batchKeys.map((key, k) => [key, lists[k]]), dropped });
});
`;

/** Publishes as fast as a window of unacknowledged messages allows; resolves with messages acknowledged. */
async function saturate(clients: { client: MqttClient; topic: string }[], ms: number, payloadFor: (gw: number, seq: number) => string): Promise<number> {
  const end = Date.now() + ms;
  let acked = 0;
  await Promise.all(
    clients.map(async ({ client, topic }, gw) => {
      let seq = 0;
      const lanes = Array.from({ length: WINDOW }, async () => {
        while (Date.now() < end) {
          await client.publishAsync(topic, payloadFor(gw, seq++), { qos: 1 });
          acked++;
        }
      });
      await Promise.all(lanes);
    }),
  );
  return acked;
}

async function connect(url: string, opts: mqtt.IClientOptions): Promise<MqttClient> {
  const c = await mqtt.connectAsync(url, { protocolVersion: 4, reconnectPeriod: 0, ...opts });
  // Nagle's algorithm adds tens of ms to small packets (stack notes).
  (c.stream as net.Socket).setNoDelay(true);
  return c;
}

/**
 * The QoS 1 subscriber of the bare broker's carried rate, as plain JS for an eval worker: on a
 * thread of its own, so receiving does not slow the publishers on the main thread. Counts arrivals
 * (mqtt.js sends each PUBACK); answers 'count' with the count so far, 'end' once disconnected.
 */
const CARRIED_SUBSCRIBER_WORKER = `
const { parentPort, workerData } = require('node:worker_threads');
const mqtt = require(require.resolve('mqtt', { paths: [process.cwd()] }));
let carried = 0;
const client = mqtt.connect(workerData.url, { clientId: 'carried', protocolVersion: 4, reconnectPeriod: 0 });
client.on('connect', () => {
  client.stream.setNoDelay(true);
  client.subscribe('bench/+/counts', { qos: 1 }, () => parentPort.postMessage('ready'));
});
client.on('message', () => carried++);
parentPort.on('message', (m) => {
  if (m === 'count') parentPort.postMessage(carried);
  else client.end(false, () => parentPort.postMessage('ended'));
});
`;

/** The next message a worker posts. */
const nextFrom = <T>(w: Worker) => new Promise<T>((resolve, reject) => {
  w.once('message', resolve);
  w.once('error', reject);
});

/**
 * Bare aedes at saturation twice: publish → PUBACK with nobody subscribed (messages acknowledged
 * and dropped), then carried to one QoS 1 subscriber on its own thread (the messages a broker
 * delivers to its consumer); then publisher → broker → subscriber latency at the realistic rate.
 */
async function bare(url: string): Promise<LoadReply> {
  const pubs = await Promise.all(Array.from({ length: GATEWAYS }, (_, i) => connect(url, { clientId: `p${i}` })));
  const same = payload(0, 0);
  const topics = pubs.map((client, i) => ({ client, topic: `bench/${i}/counts` }));
  const acked = await saturate(topics, BURST_MS, () => same);
  const carrier = new Worker(CARRIED_SUBSCRIBER_WORKER, { eval: true, workerData: { url } });
  await nextFrom(carrier);
  await saturate(topics, BURST_MS, () => same);
  // What reached the subscriber within the burst, not the backlog drained after it.
  const answer = nextFrom<number>(carrier);
  carrier.postMessage('count');
  const carried = await answer;
  const ended = nextFrom(carrier);
  carrier.postMessage('end');
  await ended;
  await carrier.terminate();
  const sub = await connect(url, { clientId: 'sub' });
  await sub.subscribeAsync('bench/+/counts', { qos: 1 });
  const lat: number[] = [];
  sub.on('message', (_t, p) => lat.push(now() - Number(JSON.parse(String(p)).sent)));
  const timers = pubs.map((p, i) => every(i, () => void p.publishAsync(`bench/${i}/counts`, payload(0, 0).slice(0, -1) + `,"sent":${now()}}`, { qos: 1 })));
  await new Promise((r) => setTimeout(r, 5_000));
  timers.forEach((stop) => stop());
  await new Promise((r) => setTimeout(r, 200));
  await Promise.all([...pubs, sub].map((c) => c.endAsync()));
  return { kind: 'bare', acked, carried, lat };
}

let gateways: { client: MqttClient; id: string }[] = [];

async function realistic(cmd: Extract<LoadCommand, { cmd: 'realistic' }>): Promise<LoadReply> {
  gateways = await Promise.all(cmd.gateways.map(async (g) => ({ id: g.id, client: await connect(`mqtt://127.0.0.1:${cmd.mqttPort}`, { username: g.id, password: g.token }) })));
  // Every client receives and parses alike, but only as many record arrival times as keep the
  // samples near 2 million: a 10-minute soak would otherwise collect 24 million of them.
  const expectedBatches = (gateways.length * cmd.ms) / 100;
  const timed = Math.min(cmd.wsClients, Math.max(10, Math.floor(MAX_LATENCY_SAMPLES / expectedBatches)));
  const browsers = new Worker(WS_CLIENTS_WORKER, { eval: true, workerData: { url: cmd.wsUrl, token: cmd.token, n: cmd.wsClients, bins: BINS, timed, capacity: MAX_LATENCY_SAMPLES * 1.2 } });
  await new Promise<void>((resolve, reject) => {
    browsers.once('message', () => resolve());
    browsers.once('error', reject);
  });
  const published: { key: string; at: number; pubackMs: number }[] = [];
  const pending: Promise<void>[] = [];
  const seqs = new Array<number>(gateways.length).fill(0);
  const timers = gateways.map((g, i) =>
    every(i, () => {
      const seq = seqs[i]!++;
      const t0 = cmd.start + seq * BINS * DT_MS;
      const entry = { key: `${g.id}/${t0}`, at: now(), pubackMs: NaN };
      published.push(entry);
      pending.push(g.client.publishAsync(topicFor(g.id, 'counts'), payload(t0, seq), { qos: 1 }).then(() => void (entry.pubackMs = now() - entry.at)));
    }),
  );
  await new Promise((r) => setTimeout(r, cmd.ms));
  timers.forEach((stop) => stop());
  await Promise.all(pending);
  await new Promise((r) => setTimeout(r, 500));
  const recorded = await new Promise<{ arrivals: [string, number[]][]; dropped: number }>((resolve) => {
    browsers.once('message', resolve);
    browsers.postMessage('done');
  });
  const arrivals = new Map(recorded.arrivals);
  await browsers.terminate();
  const batches = published.map((p) => ({ ...p, lat: (arrivals.get(p.key) ?? []).map((t) => sample(t - p.at)) }));
  return { kind: 'realistic', batches, seqs, timedBrowsers: timed, arrivalsDropped: recorded.dropped };
}

async function saturation(cmd: Extract<LoadCommand, { cmd: 'saturate' }>): Promise<LoadReply> {
  const acked = await saturate(
    gateways.map((g) => ({ client: g.client, topic: topicFor(g.id, 'counts') })),
    cmd.ms,
    (gw, seq) => payload(cmd.start + (cmd.seqBase[gw]! + seq) * BINS * DT_MS, cmd.seqBase[gw]! + seq),
  );
  await Promise.all(gateways.map((g) => g.client.endAsync()));
  return { kind: 'saturate', acked };
}

process.on('message', (cmd: LoadCommand) => {
  const run = cmd.cmd === 'bare' ? bare(cmd.url) : cmd.cmd === 'realistic' ? realistic(cmd) : saturation(cmd);
  void run.then(
    (reply) => process.send!(reply),
    (err: unknown) => process.send!({ kind: 'error', message: String(err instanceof Error ? err.stack : err) } satisfies LoadReply),
  );
});
process.send!({ kind: 'ready' } satisfies LoadReply);
