// Ingest benchmark (issue 3, "Benchmark"), each figure beside a baseline measured in the same run:
//  - bare aedes broker, QoS 1: the message rate it carries from the gateways to one subscriber (the
//    target's baseline; publish → PUBACK with nobody subscribed is reported beside it), and
//    publish → subscriber latency;
//  - plain COPY of the same bins into a one-row-per-bin table: bins/s and bytes per bin;
//  - Fringewise at a realistic load (20 gateways × 4 channels × 1 kHz bins, batches of 100) with
//    200 WebSocket clients on the bench: sustained bins/s, publish → WebSocket p50/p99 (after a 2 s
//    warm-up, and with it) and where the time goes stage by stage, memory over the soak; then at
//    saturation (every gateway publishing as fast as PUBACKs allow);
//  - stored bytes per bin, indexes included.
// The server under test (and the bare broker) run in this process; the gateways and browsers run
// in a forked child (ingest-load.ts), as other machines would in a lab.
// Run: `npm run bench:ingest [-- --soak 600] [-- --profile <dir>] [-- --no-breakdown]` (soak in s, default 30; the
// profile option writes a CPU and an allocation profile of the server's thread per phase). Prints a JSON summary.
import { execFileSync, fork, type ChildProcess } from 'node:child_process';
import diagnostics_channel from 'node:diagnostics_channel';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { Session } from 'node:inspector/promises';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { monitorEventLoopDelay, PerformanceObserver } from 'node:perf_hooks';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Aedes } from 'aedes';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { postgresBinDir } from '../../src/lib/server/db/cluster.ts';
import { LIVE_TRACE_CHANNEL, type LiveStage, type LiveTraceEvent } from '../../src/lib/server/live/trace.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';
import { freshGateway, startTestLive } from '../helpers/live-path.ts';
import { userWithToken } from '../helpers/web-app.ts';
import { BINS, BURST_MS, DT_MS, GATEWAYS, KEYS, WS_CLIENTS, type LoadCommand, type LoadReply } from './ingest-common.ts';

/** Records a CPU profile and a sampled allocation profile of this thread while `fn` runs, when a profile folder was asked for. */
async function profiled<T>(dir: string | null, phase: string, fn: () => Promise<T>): Promise<T> {
  if (!dir) return fn();
  const session = new Session();
  session.connect();
  await session.post('Profiler.enable');
  await session.post('HeapProfiler.enable');
  await session.post('Profiler.start');
  // Every 64 KiB allocated, with objects already collected kept: what feeds the young-generation GC.
  await session.post('HeapProfiler.startSampling', { samplingInterval: 65_536, includeObjectsCollectedByMajorGC: true, includeObjectsCollectedByMinorGC: true });
  try {
    return await fn();
  } finally {
    const { profile } = await session.post('Profiler.stop');
    const { profile: heap } = await session.post('HeapProfiler.stopSampling');
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, `${phase}.cpuprofile`), JSON.stringify(profile));
    writeFileSync(path.join(dir, `${phase}.heapprofile`), JSON.stringify(heap));
    session.disconnect();
  }
}

/**
 * The machine's pressure stall totals (Linux PSI, /proc/pressure; µs since boot): time at least one
 * task (`some`) or every task (`full`) waited for I/O, and time some task waited for a CPU. Null
 * where the kernel has none. Read around the realistic phase, they tell a run whose tail met the
 * machine's I/O stalls from one that did not.
 */
function pressure(): { ioSome: number; ioFull: number; cpuSome: number } | null {
  const total = (file: string, kind: 'some' | 'full') => Number(new RegExp(`^${kind} .*total=(\\d+)`, 'm').exec(readFileSync(file, 'utf8'))?.[1] ?? NaN);
  if (!existsSync('/proc/pressure/io') || !existsSync('/proc/pressure/cpu')) return null;
  return { ioSome: total('/proc/pressure/io', 'some'), ioFull: total('/proc/pressure/io', 'full'), cpuSome: total('/proc/pressure/cpu', 'some') };
}

/** `PerformanceEntry.detail.kind` of a GC entry (node:perf_hooks constants NODE_PERFORMANCE_GC_*). */
const GC_KINDS: Record<number, string> = { 1: 'scavenge', 2: 'markSweepCompact', 4: 'incremental', 8: 'weakCallbacks' };

function gcSummary(gcs: { kind: string; ms: number }[]) {
  const out: Record<string, { count: number; p50Ms: number; maxMs: number; totalMs: number }> = {};
  for (const kind of new Set(gcs.map((g) => g.kind))) {
    const ms = gcs.filter((g) => g.kind === kind).map((g) => g.ms).sort((a, b) => a - b);
    out[kind] = { count: ms.length, p50Ms: round(pct(ms, 0.5)), maxMs: round(ms[ms.length - 1]!), totalMs: round(ms.reduce((a, b) => a + b, 0), 0) };
  }
  return out;
}

function pct(sorted: number[], p: number): number {
  return sorted.length ? sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * p))]! : NaN;
}
const round = (v: number, d = 2) => Math.round(v * 10 ** d) / 10 ** d;

/** The load process: gateways and browsers (ingest-load.ts). One command at a time. */
class Load {
  private readonly child: ChildProcess;
  private readonly ready: Promise<void>;

  constructor() {
    this.child = fork(fileURLToPath(new URL('./ingest-load.ts', import.meta.url)), [], { execArgv: ['--import', 'tsx'] });
    this.ready = this.next().then(() => undefined);
  }

  private next(): Promise<LoadReply> {
    return new Promise((resolve, reject) => {
      const onExit = (code: number | null) => reject(new Error(`load process exited (${code})`));
      this.child.once('exit', onExit);
      this.child.once('message', (m: LoadReply) => {
        this.child.off('exit', onExit);
        if (m.kind === 'error') reject(new Error(`load process: ${m.message}`));
        else resolve(m);
      });
    });
  }

  async ask<K extends Exclude<LoadReply['kind'], 'ready' | 'error'>>(kind: K, cmd: LoadCommand): Promise<Extract<LoadReply, { kind: K }>> {
    await this.ready;
    const reply = this.next();
    this.child.send(cmd);
    const m = await reply;
    if (m.kind !== kind) throw new Error(`load process answered ${m.kind}, expected ${kind}`);
    return m as Extract<LoadReply, { kind: K }>;
  }

  stop(): void {
    this.child.kill();
  }
}

async function bareBroker(load: Load): Promise<{ qos1CarriedMsgsPerS: number; qos1AckedUnsubscribedMsgsPerS: number; roundTripP50Ms: number; roundTripP99Ms: number }> {
  const broker = new Aedes();
  await broker.listen();
  const server = net.createServer((s) => {
    s.setNoDelay(true);
    broker.handle(s);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  const port = (server.address() as net.AddressInfo).port;
  const { acked, carried, lat } = await load.ask('bare', { cmd: 'bare', url: `mqtt://127.0.0.1:${port}` });
  lat.sort((a, b) => a - b);
  await new Promise<void>((r) => server.close(() => r()));
  await new Promise<void>((r) => broker.close(() => r()));
  const perS = (n: number) => round(n / (BURST_MS / 1000), 0);
  return { qos1CarriedMsgsPerS: perS(carried), qos1AckedUnsubscribedMsgsPerS: perS(acked), roundTripP50Ms: round(pct(lat, 0.5)), roundTripP99Ms: round(pct(lat, 0.99)) };
}

type Marks = Partial<Record<LiveStage, number>>;
/** Latency figures leave out the deliveries of batches published this long after the realistic load starts (ms). */
const WARMUP_MS = 2_000;

/** Stages of publish → browser, each from the previous mark; `browser` is per delivery, the rest per batch. */
const STAGES = ['brokerAndDecode', 'waitForWriter', 'writeAndCommit', 'frameWait', 'frameWrite', 'toBrowser'] as const;

/**
 * Where publish → browser time goes, from the server's trace marks and the load's publish and
 * arrival times: p50/p99 of each stage, and the mean of each stage over the deliveries at or
 * above the end-to-end p99 (what the tail is made of). `toBrowser` runs from the frame's start to
 * the arrival: the hub writing to the clients before this one, the kernel, the browser's process.
 */
function breakdown(batches: Extract<LoadReply, { kind: 'realistic' }>['batches'], marks: Map<string, Marks>) {
  const perStage: Record<(typeof STAGES)[number], number[]> = { brokerAndDecode: [], waitForWriter: [], writeAndCommit: [], frameWait: [], frameWrite: [], toBrowser: [] };
  const deliveries: { e2e: number; stages: number[] }[] = [];
  for (const b of batches) {
    const m = marks.get(b.key);
    if (!m?.queued || !m['write-start'] || !m.committed || !m['frame-start'] || !m['frame-end']) continue;
    const batchStages = [m.queued - b.at, m['write-start'] - m.queued, m.committed - m['write-start'], m['frame-start'] - m.committed, m['frame-end'] - m['frame-start']];
    batchStages.forEach((v, i) => perStage[STAGES[i]!].push(v));
    for (const l of b.lat) {
      const toBrowser = b.at + l - m['frame-start'];
      perStage.toBrowser.push(toBrowser);
      deliveries.push({ e2e: l, stages: [...batchStages.slice(0, 4), toBrowser] });
    }
  }
  deliveries.sort((p, q) => p.e2e - q.e2e);
  const tail = deliveries.slice(Math.floor(deliveries.length * 0.99));
  const tailMean = (i: number) => round(tail.reduce((sum, d) => sum + d.stages[i]!, 0) / Math.max(1, tail.length));
  const stages = Object.fromEntries(
    STAGES.map((name) => {
      const v = perStage[name].sort((p, q) => p - q);
      return [name, { p50: round(pct(v, 0.5)), p99: round(pct(v, 0.99)) }];
    }),
  );
  return {
    stages,
    // frameWrite is inside toBrowser for a delivery, so the tail's stages add up to its end-to-end time.
    tailMeanMs: { e2e: round(tail.reduce((sum, d) => sum + d.e2e, 0) / Math.max(1, tail.length)), ...Object.fromEntries(['brokerAndDecode', 'waitForWriter', 'writeAndCommit', 'frameWait', 'toBrowser'].map((n, i) => [n, tailMean(i)])) },
    tracedBatches: perStage.brokerAndDecode.length,
  };
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

async function fringewise(load: Load, soakMs: number, profileDir: string | null, withBreakdown: boolean) {
  const t = await startTestLive();
  const first = await freshGateway();
  const gws = [first, ...(await Promise.all(Array.from({ length: GATEWAYS - 1 }, () => freshGateway(first.benchId))))];
  const { token } = await userWithToken('observer', 'bench');

  // Realistic load and soak: each gateway sends a batch of 100 one-ms bins every 100 ms.
  const start = Math.floor(Date.now() / 1000) * 1000 - 24 * 3_600_000;
  // This process is the server alone now: RSS, heap and Buffers (arrayBuffers) are all the server's.
  const memory: { t: number; rssMb: number; heapMb: number; buffersMb: number }[] = [];
  const marks = new Map<string, Marks>();
  const onTrace = (message: unknown) => {
    const e = message as LiveTraceEvent;
    for (const k of e.keys) {
      const m = marks.get(k) ?? {};
      m[e.stage] ??= e.at;
      marks.set(k, m);
    }
  };
  // The breakdown keeps a mark per batch in this (the server's) process; a soak that judges memory goes without.
  if (withBreakdown) diagnostics_channel.subscribe(LIVE_TRACE_CHANNEL, onTrace);
  const { pool: walPool } = getDbHandle();
  const walAt = async () => (await walPool.query<{ lsn: string }>('select pg_current_wal_lsn()::text as lsn')).rows[0]!.lsn;
  const walBefore = await walAt();
  const pressureBefore = pressure();
  const began = performance.now();
  // Pauses of the server's event loop during the realistic phase: GC by kind, and loop delay.
  const gcs: { kind: string; ms: number }[] = [];
  const gcObserver = new PerformanceObserver((list) => {
    for (const e of list.getEntries()) gcs.push({ kind: GC_KINDS[((e as PerformanceEntry & { detail?: { kind?: number } }).detail)?.kind ?? 0] ?? 'other', ms: e.duration });
  });
  gcObserver.observe({ entryTypes: ['gc'] });
  const loopDelay = monitorEventLoopDelay({ resolution: 1 });
  loopDelay.enable();
  const sampler = setInterval(() => {
    const m = process.memoryUsage();
    memory.push({ t: round((performance.now() - began) / 1000, 0), rssMb: round(m.rss / 2 ** 20, 1), heapMb: round(m.heapUsed / 2 ** 20, 1), buffersMb: round(m.arrayBuffers / 2 ** 20, 1) });
  }, 5_000);
  const real = await profiled(profileDir, 'realistic', () =>
    load.ask('realistic', {
      cmd: 'realistic',
      mqttPort: t.mqttPort,
      gateways: gws.map((g) => ({ id: g.gatewayId, token: g.token })),
      wsUrl: `${t.baseUrl.replace('http', 'ws')}/api/v1/live?bench=${first.benchId}`,
      token,
      wsClients: WS_CLIENTS,
      ms: soakMs,
      start,
    }),
  );
  clearInterval(sampler);
  gcObserver.disconnect();
  loopDelay.disable();
  if (withBreakdown) diagnostics_channel.unsubscribe(LIVE_TRACE_CHANNEL, onTrace);
  const publishedSpan = (real.batches.at(-1)!.at - real.batches[0]!.at) / 1000 + (BINS * DT_MS) / 1000;
  // Latency is judged in the steady state: the first WARMUP_MS, when 20 gateways have just come
  // online (first span reads, channels created, code not yet optimised), held a quarter of the
  // p99 tail in a traced run. Reported with them too.
  const steadyFrom = real.batches[0]!.at + WARMUP_MS;
  const steady = real.batches.filter((b) => b.at >= steadyFrom);
  const lat = steady.flatMap((b) => b.lat).sort((a, b) => a - b);
  const latWithWarmup = real.batches.flatMap((b) => b.lat).sort((a, b) => a - b);
  const puback = steady.map((b) => b.pubackMs).sort((a, b) => a - b);
  const pubackWithWarmup = real.batches.map((b) => b.pubackMs).sort((a, b) => a - b);
  const { pool } = getDbHandle();
  const stored = async () =>
    (await pool.query<{ bins: number }>('select coalesce(sum(n * array_length(keys, 1)), 0)::float8 as bins from count_batches where gateway_id = any($1)', [gws.map((g) => g.gatewayId)])).rows[0]!.bins;
  const realisticBins = await stored();
  // WAL written per stored batch: what each write costs PostgreSQL in bytes (rows, rollups, health, indexes).
  const wal = await walPool.query<{ bytes: number }>('select pg_wal_lsn_diff($1::pg_lsn, $2::pg_lsn)::float8 as bytes', [await walAt(), walBefore]);
  const walBytesPerBatch = round(wal.rows[0]!.bytes / real.batches.length, 0);
  const pressureAfter = pressure();
  const stalledMs = (k: 'ioSome' | 'ioFull' | 'cpuSome') => (pressureBefore && pressureAfter ? round((pressureAfter[k] - pressureBefore[k]) / 1000, 0) : null);
  const machineStalls = { ioSomeMs: stalledMs('ioSome'), ioFullMs: stalledMs('ioFull'), cpuSomeMs: stalledMs('cpuSome') };
  const realistic = {
    binsPerS: round(realisticBins / publishedSpan, 0),
    wsP50Ms: round(pct(lat, 0.5)),
    wsP99Ms: round(pct(lat, 0.99)),
    withWarmup: { wsP50Ms: round(pct(latWithWarmup, 0.5)), wsP99Ms: round(pct(latWithWarmup, 0.99)), pubackP99Ms: round(pct(pubackWithWarmup, 0.99)) },
    // Deliveries recorded (by the timed browsers; all 200 when the run is short) against expected.
    wsDeliveries: latWithWarmup.length,
    wsDeliveriesSteady: lat.length,
    wsExpected: real.batches.length * real.timedBrowsers,
    arrivalsDropped: real.arrivalsDropped,
    pubackP50Ms: round(pct(puback, 0.5)),
    pubackP99Ms: round(pct(puback, 0.99)),
    walBytesPerBatch,
    // Over the realistic phase (PSI): how long the machine's tasks waited for I/O and for a CPU.
    machineStalls,
    breakdown: withBreakdown ? breakdown(steady, marks) : null,
    eventLoopDelayMs: { p50: round(loopDelay.percentile(50) / 1e6), p99: round(loopDelay.percentile(99) / 1e6), max: round(loopDelay.max / 1e6) },
    gcPauses: gcSummary(gcs),
    memory,
  };

  // Saturation, with the browsers gone: every gateway as fast as its window of unacknowledged messages allows.
  const { acked } = await profiled(profileDir, 'saturation', () =>
    load.ask('saturate', { cmd: 'saturate', ms: BURST_MS, start, seqBase: real.seqs.map((s) => s + 1_000) }),
  );
  const ids = gws.map((g) => g.gatewayId);
  // Rollups follow the writes (the rollup journal): how long they took to catch up once the burst
  // ended, and whether they then hold every stored bin once (bins per key, coincidences aside).
  const burstEnded = performance.now();
  while ((await pool.query('select 1 from rollup_pending where gateway_id = any($1) limit 1', [ids])).rowCount) await new Promise((r) => setTimeout(r, 10));
  const rollupCatchUpMs = round(performance.now() - burstEnded, 0);
  const { rows: held } = await pool.query<{ raw: number; rolled: number }>(
    `select (select coalesce(sum(n * array_length(keys, 1)), 0) from count_batches where gateway_id = any($1))::float8 as raw,
            (select coalesce(sum(b), 0) from rollups r, unnest(r.bins) b where r.gateway_id = any($1) and r.step_ms = 1000 and r.key <> '#cc')::float8 as rolled`,
    [ids],
  );
  const saturation = {
    msgsPerS: round(acked / (BURST_MS / 1000), 0),
    binsPerS: round((acked * BINS * KEYS.length) / (BURST_MS / 1000), 0),
    rollupCatchUpMs,
    rollupsHoldEveryBin: held[0]!.raw === held[0]!.rolled,
  };

  const totalBins = await stored();
  const { rows } = await pool.query<{ size: number; all: number }>(
    "select pg_total_relation_size('count_batches')::float8 as size, (select coalesce(sum(n * array_length(keys, 1)), 0) from count_batches)::float8 as all",
  );
  await t.close();
  return { realistic, saturation, bytesPerBin: round(rows[0]!.size / rows[0]!.all), storedBins: totalBins };
}

export async function run(opts: { soakSeconds?: number; profileDir?: string | null; breakdown?: boolean } = {}) {
  const soakMs = (opts.soakSeconds ?? 30) * 1000;
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  const load = new Load();
  try {
    const bare = await bareBroker(load);
    const fw = await fringewise(load, soakMs, opts.profileDir ?? null, opts.breakdown ?? true);
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
        // The target's baseline is what the bare broker delivers to one QoS 1 subscriber: the server
        // consumes every message its broker takes in (in process, through the publish hook), and
        // the issue's own figure for the bare broker (20,000–30,000 msgs/s) is a delivered rate. A
        // broker with nobody subscribed acknowledges and drops; that ratio is reported beside it.
        saturationVsBareBroker: round(fw.saturation.msgsPerS / bare.qos1CarriedMsgsPerS),
        saturationVsBareBrokerUnsubscribed: round(fw.saturation.msgsPerS / bare.qos1AckedUnsubscribedMsgsPerS),
        wsP99MinusBrokerP99Ms: round(fw.realistic.wsP99Ms - bare.roundTripP99Ms),
        wsP99WithWarmupMinusBrokerP99Ms: round(fw.realistic.withWarmup.wsP99Ms - bare.roundTripP99Ms),
        ingestVsCopyBinsPerS: round(fw.saturation.binsPerS / copy.copyBinsPerS),
        // Offered: every gateway's channels × 1,000 bins/s; below ~0.97 the server fell behind.
        realisticStoredVsOffered: round(fw.realistic.binsPerS / ((GATEWAYS * KEYS.length * BINS * 1000) / (BINS * DT_MS))),
      },
      memorySamples: mem,
    };
    console.log(JSON.stringify(summary, null, 2));
    return summary;
  } finally {
    load.stop();
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
  await run({ soakSeconds: Number(arg('--soak') ?? 30), profileDir: arg('--profile'), breakdown: !process.argv.includes('--no-breakdown') });
  process.exit(0);
}
