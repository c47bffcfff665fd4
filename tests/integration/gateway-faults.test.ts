// Fault tests of the bench gateway against the real live path (embedded broker, ingest,
// PostgreSQL): fault 2, the broker stopped for 20 s while the gateway runs, and a gateway killed
// (SIGKILL) mid-stream during an outage and started again. Nothing the gateway stored is lost,
// nothing is stored twice.
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { asc, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Gateway } from '../../gateway/gateway.ts';
import { SimCounter } from '../../gateway/drivers/sim.ts';
import type { Bins, Counter } from '../../gateway/counter.ts';
import { findDemoBench } from '../../simulators/demo-benches.ts';
import { countBatchSchema, type CountBatch } from '../../src/lib/contract/wire.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { unpackCounts } from '../../src/lib/server/db/packed-counts.ts';
import { countBatches, gatewayHealth } from '../../src/lib/server/db/schema.ts';
import { freshGateway, startTestLive, until, type TestLive } from '../helpers/live-path.ts';

let dir: string;
const lives: TestLive[] = [];
const children: ChildProcess[] = [];

beforeAll(async () => {
  dir = await mkdtemp(path.join(os.tmpdir(), 'fw-gateway-faults-'));
});
afterAll(async () => {
  for (const c of children) if (c.exitCode === null) c.kill('SIGKILL');
  for (const l of lives) await l.close().catch(() => undefined);
  await rm(dir, { recursive: true, force: true });
});

async function live(port = 0): Promise<TestLive> {
  const l = await startTestLive(port ? { live: { mqttPort: port } } : {});
  lives.push(l);
  return l;
}

async function closeLive(l: TestLive): Promise<void> {
  await l.close();
  lives.splice(lives.indexOf(l), 1);
}

async function stored(gatewayId: string) {
  return await getDb()
    .select({ t0: countBatches.t0, n: countBatches.n, keys: countBatches.keys, counts: countBatches.counts, boot: countBatches.boot, seq: countBatches.seq })
    .from(countBatches)
    .where(eq(countBatches.gatewayId, gatewayId))
    .orderBy(asc(countBatches.t0));
}

/** Per-bin counts keyed `t:key`, from stored rows (channel-major arrays). */
function binsOfRows(rows: Awaited<ReturnType<typeof stored>>, dt: number): Map<string, number> {
  const out = new Map<string, number>();
  for (const r of rows) r.keys.forEach((k, i) => unpackCounts(r.counts).slice(i * r.n, (i + 1) * r.n).forEach((c, j) => out.set(`${r.t0 + j * dt}:${k}`, c)));
  return out;
}

function binsOfBatches(batches: Pick<Bins, 't0' | 'dt' | 'ch'>[]): Map<string, number> {
  const out = new Map<string, number>();
  for (const b of batches) for (const [k, counts] of Object.entries(b.ch)) counts.forEach((c, j) => out.set(`${b.t0 + j * b.dt}:${k}`, c));
  return out;
}

/**
 * Seqs rise with time from 0: replay kept the order. A row holds a run of contiguous batches of one
 * write (rows merge them), named by its first seq, so rows skip the seqs inside them; that none is
 * missing is the health page's seq gap count (a late batch takes its gap back, so it says nothing
 * of order).
 */
function inOrderFromZero(seqs: number[]): boolean {
  return seqs[0] === 0 && seqs.every((s, i) => i === 0 || s > seqs[i - 1]!);
}

async function seqGaps(gatewayId: string): Promise<number> {
  const [h] = await getDb().select({ gaps: gatewayHealth.seqGaps }).from(gatewayHealth).where(eq(gatewayHealth.gatewayId, gatewayId));
  return Number(h?.gaps ?? 0);
}

describe('gateway store and forward', () => {
  it('fault 2: buffers through a 20 s broker outage and replays it; every bin is stored exactly once', async () => {
    const first = await live();
    const port = first.mqttPort;
    const { gatewayId, token } = await freshGateway();
    const produced: Bins[] = [];
    const sim = new SimCounter({ bench: findDemoBench('mz-810')!, dtMs: 10, batchMs: 100 });
    // Records every batch the counter hands over: the ground truth the database must match.
    const counter: Counter = {
      start: (sink) => sim.start({ ...sink, bins: (b) => (produced.push(b), sink.bins(b)) }),
      command: (cmd) => sim.command(cmd),
      stop: () => sim.stop(),
    };
    const gw = await Gateway.start({
      id: gatewayId,
      token,
      url: `mqtt://127.0.0.1:${port}`,
      driver: 'sim',
      counter,
      queueDir: path.join(dir, 'outage'),
      reconnectMaxMs: 1000,
      drainMs: 15_000,
      log: { info: () => undefined, warn: () => undefined },
    });
    await until(() => gw.stats().acknowledged >= 10, 10_000, 'batches acknowledged before the outage');

    await closeLive(first);
    const downAt = Date.now();
    await sleep(20_000);
    const during = gw.stats();
    expect(during.connected).toBe(false);
    // 20 s of 100 ms batches wait on disk, far more than the in-flight window of 100.
    expect(during.queued).toBeGreaterThan(150);
    expect(during.inFlight).toBe(0);

    await live(port);
    await until(() => gw.stats().connected, 10_000, 'the gateway to reconnect');
    await until(() => gw.stats().queued < 5, 20_000, 'the backlog to drain');
    const recoveredMs = Date.now() - downAt;
    await gw.stop();
    expect(gw.stats().queued).toBe(0);

    const want = binsOfBatches(produced);
    await until(async () => binsOfRows(await stored(gatewayId), 10).size >= want.size, 15_000, 'every bin to be stored');
    const rows = await stored(gatewayId);
    expect(binsOfRows(rows, 10)).toEqual(want);
    expect(rows.every((r) => r.boot === gw.boot)).toBe(true);
    expect(inOrderFromZero(rows.map((r) => r.seq))).toBe(true);
    expect(await seqGaps(gatewayId)).toBe(0);
    expect(produced.length).toBeGreaterThan((recoveredMs / 100) * 0.8);
  });

  it('loses nothing when the gateway is killed mid-stream during an outage and started again', async () => {
    const first = await live();
    const port = first.mqttPort;
    const { gatewayId, token } = await freshGateway();
    const queueDir = path.join(dir, 'restart');
    const run = (): ChildProcess => {
      // node with tsx's loader, not the tsx wrapper: SIGKILL must hit the gateway itself.
      const child = spawn(
        process.execPath,
        ['--import', 'tsx', 'gateway/cli.ts', '--id', gatewayId, '--driver', 'sim', '--bench', 'mz-633', '--url', `mqtt://127.0.0.1:${port}`, '--queue-dir', queueDir],
        { env: { ...process.env, FRINGEWISE_GATEWAY_TOKEN: token }, stdio: ['ignore', 'ignore', 'inherit'] },
      );
      children.push(child);
      return child;
    };

    const a = run();
    await until(async () => (await stored(gatewayId)).length >= 10, 20_000, 'the first run to deliver');
    await closeLive(first);
    await sleep(3000);
    a.kill('SIGKILL');
    await new Promise((r) => a.once('exit', r));

    // What the killed gateway had durably queued: the batches it owed the server.
    const queued: CountBatch[] = [];
    for (const f of (await readdir(queueDir)).filter((n) => n.endsWith('.seg'))) {
      for (const line of (await readFile(path.join(queueDir, f), 'utf8')).split('\n').filter(Boolean)) queued.push(countBatchSchema.parse(JSON.parse(line.slice(9))));
    }
    expect(new Set(queued.map((q) => q.boot)).size).toBe(1);
    const lastA = queued.reduce((p, q) => (q.seq > p.seq ? q : p));
    const bootA = lastA.boot;
    expect(lastA.seq).toBeGreaterThan(30);
    const endOfA = lastA.t0 + Object.values(lastA.ch)[0]!.length * lastA.dt;

    await live(port);
    const b = run();
    await until(
      async () => {
        const rows = await stored(gatewayId);
        const binsB = rows.filter((r) => r.boot !== bootA).reduce((n, r) => n + r.n, 0);
        return rows.some((r) => r.boot === bootA && r.t0 + r.n * 10 >= endOfA) && binsB >= 100;
      },
      30_000,
      'the restarted gateway to deliver the old queue and new batches',
    );
    b.kill('SIGTERM');
    expect(await new Promise((r) => b.once('exit', r))).toBe(0);

    const rows = await stored(gatewayId);
    const restOfRows = rows.filter((r) => r.boot !== bootA);
    // Boot A: every batch it had queued is stored with its counts, in order and none missing (no
    // seq gap); boot B likewise from 0.
    const storedBins = binsOfRows(rows, 10);
    for (const [bin, count] of binsOfBatches(queued)) expect(storedBins.get(bin)).toBe(count);
    expect(inOrderFromZero(rows.filter((r) => r.boot === bootA).map((r) => r.seq))).toBe(true);
    expect(await seqGaps(gatewayId)).toBe(0);
    expect(new Set(restOfRows.map((r) => r.boot)).size).toBe(1);
    expect(inOrderFromZero(restOfRows.map((r) => r.seq))).toBe(true);
    // In time, boot B starts after boot A ends: no bin time used twice.
    const endA = Math.max(...rows.filter((r) => r.boot === bootA).map((r) => r.t0 + r.n * 10));
    expect(Math.min(...restOfRows.map((r) => r.t0))).toBeGreaterThanOrEqual(endA);
  });
});
