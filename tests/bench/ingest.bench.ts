// Ingest benchmark (issue 3, "Benchmark"), each figure beside a baseline measured in the same run:
//  - bare aedes broker, QoS 1: publish → PUBACK message rate, and publish → subscriber latency;
//  - plain COPY of the same bins into a one-row-per-bin table: bins/s and bytes per bin;
//  - Fringewise at a realistic load (20 gateways × 4 channels × 1 kHz bins, batches of 100) with
//    200 WebSocket clients on the bench: sustained bins/s, publish → WebSocket p50/p99, memory
//    over the soak; then at saturation (every gateway publishing as fast as PUBACKs allow);
//  - stored bytes per bin, indexes included.
// Run: `npm run bench:ingest [-- --soak 600] [-- --profile <dir>]` (soak in s, default 30; the
// profile option writes one CPU profile of the server's thread per phase). Prints a JSON summary.
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { Session } from 'node:inspector/promises';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { Aedes } from 'aedes';
import mqtt, { type MqttClient } from 'mqtt';
import { Worker } from 'node:worker_threads';
import { topicFor, type CountBatch } from '../../src/lib/contract/wire.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { postgresBinDir } from '../../src/lib/server/db/cluster.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';
import { connectGateway, freshGateway, startTestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';

const GATEWAYS = 20;
const KEYS = ['a', 'b', 'c', 'd'];
const BINS = 100;
const DT_MS = 1; // 1 kHz bins
const WS_CLIENTS = 200;
/** Saturation and baseline phases last this long each, ms. */
const BURST_MS = 10_000;
/** Most unacknowledged QoS 1 messages per publisher at saturation. */
const WINDOW = 64;

/**
 * The WebSocket clients, as plain JS for an eval worker: latency = arrival − the publish time the
 * main thread posts. One thread receives for all 200 browsers (40,000 messages/s), so it reads the
 * gateway and t0 from the message head instead of parsing ~3 KB of JSON each time; a message that
 * is longer than one batch (merged by the server) is parsed whole, and each batch in it counts.
 */
const WS_CLIENTS_WORKER = `
const { parentPort, workerData } = require('node:worker_threads');
const WebSocket = require(require.resolve('ws', { paths: [process.cwd()] }));
const sentAt = new Map();
const lat = [];
const now = () => performance.timeOrigin + performance.now();
const HEAD = /^{"type":"counts","bench":"[^"]*","gateway":"([^"]*)","t0":(\\d+),"dt":(\\d+)/;
let oneBatchBytes = Infinity;
const arrived = (key, t) => {
  const s = sentAt.get(key);
  if (!s) return;
  lat.push(t - s.at);
  if (--s.left === 0) sentAt.delete(key);
};
let open = 0;
for (let i = 0; i < workerData.n; i++) {
  const ws = new WebSocket(workerData.url, { headers: { authorization: 'Bearer ' + workerData.token } });
  ws.on('open', () => { if (++open === workerData.n) parentPort.postMessage('ready'); });
  ws.on('message', (data) => {
    const t = now();
    const head = HEAD.exec(data.toString('latin1', 0, 200));
    if (!head) return;
    if (data.length < oneBatchBytes * 1.5) {
      oneBatchBytes = Math.min(oneBatchBytes, data.length);
      return arrived(head[1] + '/' + head[2], t);
    }
    const m = JSON.parse(String(data));
    const n = Object.values(m.ch)[0].length;
    for (let j = 0; j < n; j += workerData.bins) arrived(m.gateway + '/' + (m.t0 + j * m.dt), t);
  });
}
parentPort.on('message', (m) => {
  if (m === 'done') parentPort.postMessage(lat);
  else sentAt.set(m.key, { at: m.at, left: workerData.n });
});
`;

function batch(t0: number, seq: number): CountBatch {
  const ch: Record<string, number[]> = {};
  for (const [k, key] of KEYS.entries()) ch[key] = Array.from({ length: BINS }, (_, i) => 20 + ((i * (k + 3)) % 17));
  return { v: 1, boot: 'bench', seq, t0, dt: DT_MS, ch };
}

/** The same JSON as `JSON.stringify(batch(t0, seq))`, from a cached count block: the load generator shares the server's core and must stay cheap (~1 µs instead of ~20 µs). */
const CH_JSON = JSON.stringify(batch(0, 0).ch);
function payload(t0: number, seq: number): string {
  return `{"v":1,"boot":"bench","seq":${seq},"t0":${t0},"dt":${DT_MS},"ch":${CH_JSON}}`;
}

/** Records a CPU profile of this thread while `fn` runs, when a profile folder was asked for. */
async function profiled<T>(dir: string | null, phase: string, fn: () => Promise<T>): Promise<T> {
  if (!dir) return fn();
  const session = new Session();
  session.connect();
  await session.post('Profiler.enable');
  await session.post('Profiler.start');
  try {
    return await fn();
  } finally {
    const { profile } = await session.post('Profiler.stop');
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, `${phase}.cpuprofile`), JSON.stringify(profile));
    session.disconnect();
  }
}

/**
 * Runs `fn` for gateway `i` once per batch period (100 ms), phase-shifted by i/20 of the period:
 * independent benches are not in step, and 20 timers created together would fire in the same
 * tick, turning the steady load into one burst of 20 batches every 100 ms. Returns a stop function.
 */
function every(i: number, fn: () => void): () => void {
  const period = BINS * DT_MS;
  let timer: NodeJS.Timeout | undefined;
  const start = setTimeout(() => {
    fn();
    timer = setInterval(fn, period);
  }, (i * period) / GATEWAYS);
  return () => {
    clearTimeout(start);
    clearInterval(timer);
  };
}

function pct(sorted: number[], p: number): number {
  return sorted.length ? sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * p))]! : NaN;
}
const round = (v: number, d = 2) => Math.round(v * 10 ** d) / 10 ** d;

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

async function bareBroker(): Promise<{ qos1MsgsPerS: number; roundTripP50Ms: number; roundTripP99Ms: number }> {
  const broker = new Aedes();
  await broker.listen();
  const server = net.createServer((s) => {
    s.setNoDelay(true);
    broker.handle(s);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  const port = (server.address() as net.AddressInfo).port;
  const url = `mqtt://127.0.0.1:${port}`;
  const pubs = await Promise.all(Array.from({ length: GATEWAYS }, (_, i) => mqtt.connectAsync(url, { clientId: `p${i}`, protocolVersion: 4 })));
  for (const p of pubs) (p.stream as net.Socket).setNoDelay(true);
  const same = payload(0, 0);
  const rate = (await saturate(pubs.map((client, i) => ({ client, topic: `bench/${i}/counts` })), BURST_MS, () => same)) / (BURST_MS / 1000);

  // Round trip at the realistic rate: publisher → broker → one subscriber.
  const sub = await mqtt.connectAsync(url, { clientId: 'sub', protocolVersion: 4 });
  (sub.stream as net.Socket).setNoDelay(true);
  await sub.subscribeAsync('bench/+/counts', { qos: 1 });
  const lat: number[] = [];
  sub.on('message', (_t, p) => lat.push(performance.now() - Number(JSON.parse(String(p)).sent)));
  const timers = pubs.map((p, i) =>
    every(i, () => void p.publishAsync(`bench/${i}/counts`, JSON.stringify({ ...batch(0, 0), sent: performance.now() }), { qos: 1 })),
  );
  await new Promise((r) => setTimeout(r, 5_000));
  timers.forEach((stop) => stop());
  await new Promise((r) => setTimeout(r, 200));
  lat.sort((a, b) => a - b);
  await Promise.all([...pubs, sub].map((c) => c.endAsync()));
  await new Promise<void>((r) => server.close(() => r()));
  await new Promise<void>((r) => broker.close(() => r()));
  return { qos1MsgsPerS: round(rate, 0), roundTripP50Ms: round(pct(lat, 0.5)), roundTripP99Ms: round(pct(lat, 0.99)) };
}

/** COPY of the same bins (one row per gateway, channel and bin) into an equivalent table. */
async function copyBaseline(bins: number): Promise<{ copyBinsPerS: number; copyBytesPerBin: number }> {
  const { pool } = getDbHandle();
  await pool.query('drop table if exists bench_copy_bins');
  await pool.query('create table bench_copy_bins (gateway_id text not null, key text not null, t bigint not null, count int not null, primary key (gateway_id, key, t))');
  const dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-copy-'));
  const file = path.join(dir, 'bins.csv');
  const lines: string[] = [];
  const perSeries = Math.ceil(bins / (GATEWAYS * KEYS.length));
  for (let g = 0; g < GATEWAYS; g++) for (const k of KEYS) for (let i = 0; i < perSeries; i++) lines.push(`gw-${g},${k},${i},${20 + (i % 17)}`);
  writeFileSync(file, lines.join('\n') + '\n');
  execFileSync('chmod', ['-R', 'a+rX', dir]);
  const url = process.env['DATABASE_URL']!;
  const started = performance.now();
  execFileSync(path.join(postgresBinDir(), 'psql'), [url, '-q', '-c', `\\copy bench_copy_bins from '${file}' csv`]);
  const seconds = (performance.now() - started) / 1000;
  const { rows } = await pool.query<{ size: number }>("select pg_total_relation_size('bench_copy_bins')::float8 as size");
  await pool.query('drop table bench_copy_bins');
  rmSync(dir, { recursive: true, force: true });
  return { copyBinsPerS: round(lines.length / seconds, 0), copyBytesPerBin: round(rows[0]!.size / lines.length) };
}

async function fringewise(soakMs: number, profileDir: string | null) {
  const t = await startTestLive();
  const first = await freshGateway();
  const gws = [first, ...(await Promise.all(Array.from({ length: GATEWAYS - 1 }, () => freshGateway(first.benchId))))];
  const clients = await Promise.all(gws.map((g) => connectGateway(t.mqttPort, g.gatewayId, g.token)));
  for (const c of clients) (c.stream as net.Socket).setNoDelay(true);
  const { token } = await userWithToken('observer', 'bench');
  // The 200 browsers run in a worker thread: on this 2-core machine their JSON parsing would
  // otherwise share the server's event loop and measure the benchmark, not the server.
  const clientsWorker = new Worker(WS_CLIENTS_WORKER, { eval: true, workerData: { url: `${t.baseUrl.replace('http', 'ws')}/api/v1/live?bench=${first.benchId}`, token, n: WS_CLIENTS, bins: BINS } });
  await new Promise<void>((resolve, reject) => {
    clientsWorker.once('message', () => resolve());
    clientsWorker.once('error', reject);
  });
  const now = () => performance.timeOrigin + performance.now();

  // Realistic load and soak: each gateway sends a batch of 100 one-ms bins every 100 ms.
  const start = Math.floor(Date.now() / 1000) * 1000 - 24 * 3_600_000;
  const seqs = new Array<number>(GATEWAYS).fill(0);
  // RSS counts the clients' worker thread too; heap and Buffers (arrayBuffers) are the server thread's own.
  const memory: { t: number; rssMb: number; heapMb: number; buffersMb: number }[] = [];
  const began = performance.now();
  const pending: Promise<void>[] = [];
  const timers = clients.map((c, i) =>
    every(i, () => {
      const seq = seqs[i]!++;
      const t0 = start + seq * BINS * DT_MS;
      clientsWorker.postMessage({ key: `${gws[i]!.gatewayId}/${t0}`, at: now() });
      pending.push(c.publishAsync(topicFor(gws[i]!.gatewayId, 'counts'), payload(t0, seq), { qos: 1 }).then(() => undefined));
    }),
  );
  const sampler = setInterval(() => {
    const m = process.memoryUsage();
    memory.push({ t: round((performance.now() - began) / 1000, 0), rssMb: round(m.rss / 2 ** 20, 1), heapMb: round(m.heapUsed / 2 ** 20, 1), buffersMb: round(m.arrayBuffers / 2 ** 20, 1) });
  }, 5_000);
  await profiled(profileDir, 'realistic', () => new Promise((r) => setTimeout(r, soakMs)));
  timers.forEach((stop) => stop());
  clearInterval(sampler);
  await Promise.all(pending);
  const realSeconds = (performance.now() - began) / 1000;
  await new Promise((r) => setTimeout(r, 500));
  const lat = await new Promise<number[]>((resolve) => {
    clientsWorker.once('message', (m: number[]) => resolve(m));
    clientsWorker.postMessage('done');
  });
  await clientsWorker.terminate();
  lat.sort((a, b) => a - b);
  const { pool } = getDbHandle();
  const stored = async () =>
    (await pool.query<{ bins: number }>('select coalesce(sum(n * array_length(keys, 1)), 0)::float8 as bins from count_batches where gateway_id = any($1)', [gws.map((g) => g.gatewayId)])).rows[0]!.bins;
  const realisticBins = await stored();
  const realistic = {
    binsPerS: round(realisticBins / realSeconds, 0),
    wsP50Ms: round(pct(lat, 0.5)),
    wsP99Ms: round(pct(lat, 0.99)),
    wsDeliveries: lat.length,
    memory,
  };

  // Saturation, with the browsers gone: every gateway as fast as its window of unacknowledged messages allows.
  const satStart = seqs.map((s) => s + 1_000);
  const acked = await profiled(profileDir, 'saturation', () =>
    saturate(
      clients.map((client, i) => ({ client, topic: topicFor(gws[i]!.gatewayId, 'counts') })),
      BURST_MS,
      (gw, seq) => payload(start + (satStart[gw]! + seq) * BINS * DT_MS, satStart[gw]! + seq),
    ),
  );
  const saturation = { msgsPerS: round(acked / (BURST_MS / 1000), 0), binsPerS: round((acked * BINS * KEYS.length) / (BURST_MS / 1000), 0) };

  const totalBins = await stored();
  const { rows } = await pool.query<{ size: number; all: number }>(
    "select pg_total_relation_size('count_batches')::float8 as size, (select coalesce(sum(n * array_length(keys, 1)), 0) from count_batches)::float8 as all",
  );
  await Promise.all(clients.map((c) => c.endAsync()));
  await t.close();
  return { realistic, saturation, bytesPerBin: round(rows[0]!.size / rows[0]!.all), storedBins: totalBins };
}

export async function run(opts: { soakSeconds?: number; profileDir?: string | null } = {}) {
  const soakMs = (opts.soakSeconds ?? 30) * 1000;
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  try {
    const bare = await bareBroker();
    const fw = await fringewise(soakMs, opts.profileDir ?? null);
    const copy = await copyBaseline(Math.min(fw.storedBins, 2_000_000));
    const mem = fw.realistic.memory;
    const summary = {
      setup: { gateways: GATEWAYS, channels: KEYS.length, binMs: DT_MS, binsPerBatch: BINS, wsClients: WS_CLIENTS, soakSeconds: soakMs / 1000 },
      bareBroker: bare,
      copyBaseline: copy,
      realistic: { ...fw.realistic, memory: undefined, memoryFirstLast: { first: mem[0], last: mem[mem.length - 1], maxRssMb: Math.max(...mem.map((m) => m.rssMb)) } },
      saturation: fw.saturation,
      storage: { bytesPerBin: fw.bytesPerBin, copyTableBytesPerBin: copy.copyBytesPerBin },
      ratios: {
        saturationVsBareBroker: round(fw.saturation.msgsPerS / bare.qos1MsgsPerS),
        wsP99MinusBrokerP99Ms: round(fw.realistic.wsP99Ms - bare.roundTripP99Ms),
        ingestVsCopyBinsPerS: round(fw.saturation.binsPerS / copy.copyBinsPerS),
        // Offered: every gateway's channels × 1,000 bins/s; below ~0.97 the server fell behind.
        realisticStoredVsOffered: round(fw.realistic.binsPerS / ((GATEWAYS * KEYS.length * BINS * 1000) / (BINS * DT_MS))),
      },
      memorySamples: mem,
    };
    console.log(JSON.stringify(summary, null, 2));
    return summary;
  } finally {
    const { closeDb } = await import('../../src/lib/server/db/index.ts');
    await closeDb();
    if (ownDb) await stopTestDb();
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const arg = (name: string) => {
    const i = process.argv.indexOf(name);
    return i > 0 ? (process.argv[i + 1] ?? null) : null;
  };
  await run({ soakSeconds: Number(arg('--soak') ?? 30), profileDir: arg('--profile') });
  process.exit(0);
}
