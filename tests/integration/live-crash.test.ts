// Fault tests 1 and 3 of issue 3: the server SIGKILLed mid-stream, and PostgreSQL restarted
// mid-stream, while a gateway publishes at QoS 1. Every bin sent must be stored exactly once.
import { spawn, type ChildProcess } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { MqttClient } from 'mqtt';
import { freePort, startCluster, type Cluster } from '../../src/lib/server/db/cluster.ts';
import { closeDb, getDbHandle } from '../../src/lib/server/db/index.ts';
import { connectGateway, freshGateway, makeBatch, publishBatch, rolledUp, startTestLive } from '../helpers/live-path.ts';

const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 3_600_000;
const BINS = 100;
const value = (k: string, i: number) => (k === 'a' ? 3 : 1) + (i % 7);

/** Publishes batch after batch every `everyMs` without waiting for PUBACKs; `stop()` resolves when all are acknowledged. */
function stream(client: MqttClient, gatewayId: string, everyMs: number) {
  let seq = 0;
  const acks: Promise<void>[] = [];
  const timer = setInterval(() => {
    const b = makeBatch(BASE + seq * BINS * 10, BINS, seq, { value });
    seq += 1;
    acks.push(publishBatch(client, gatewayId, b));
  }, everyMs);
  return {
    get sent() {
      return seq;
    },
    stop: async () => {
      clearInterval(timer);
      await Promise.all(acks);
      return seq;
    },
  };
}

async function expectExactlyOnce(gatewayId: string, batches: number): Promise<void> {
  const { pool } = getDbHandle();
  // Rows join contiguous batches of one write, so exactly once is per bin: as many distinct bin
  // times as bins stored, and every batch's bins and counts there.
  const { rows } = await pool.query<{ bins: number; distinct_bins: number; sum: number }>(
    `select coalesce(sum(n), 0)::int as bins,
            (select count(distinct c.t0 + i * c.dt)::int from count_batches c, generate_series(0, c.n - 1) i where c.gateway_id = $1) as distinct_bins,
            coalesce((select sum(v) from count_batches c, unnest(unpack_counts(c.counts)) v where c.gateway_id = $1), 0)::int as sum
       from count_batches where gateway_id = $1`,
    [gatewayId],
  );
  let expected = 0;
  for (let i = 0; i < BINS; i++) expected += value('a', i) + value('b', i);
  expect(rows[0]).toEqual({ bins: batches * BINS, distinct_bins: batches * BINS, sum: batches * expected });
  await rolledUp(gatewayId);
  const { rows: r } = await pool.query<{ sum: number; bins: number }>(
    `select coalesce(sum(v), 0)::int as sum, (select coalesce(sum(b), 0)::int from rollups r2, unnest(r2.bins) b where r2.gateway_id = $1 and r2.step_ms = 1000) as bins
       from rollups r, unnest(r.sums) v where r.gateway_id = $1 and r.step_ms = 1000`,
    [gatewayId],
  );
  expect(r[0]).toEqual({ sum: batches * expected, bins: batches * BINS * 2 });
}

describe('SIGKILL of the server mid-stream', () => {
  const children: ChildProcess[] = [];
  afterAll(() => {
    for (const c of children) if (c.exitCode === null) c.kill('SIGKILL');
  });

  async function startServer(mqttPort: number): Promise<ChildProcess> {
    // node with tsx as a loader, not the tsx wrapper: SIGKILL must hit the process that holds the broker.
    const child = spawn(process.execPath, ['--import', 'tsx', 'src/server/start.ts'], {
      env: { ...process.env, MQTT_PORT: String(mqttPort), PORT: '0', FRINGEWISE_WEB: '0', FRINGEWISE_SIMULATE: '0', FRINGEWISE_SEED: '0', FRINGEWISE_BUILD: '0' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    children.push(child);
    let out = '';
    await new Promise<void>((resolve, reject) => {
      const onData = (d: Buffer) => {
        out += d.toString();
        if (out.includes('[mqtt] broker listening')) resolve();
      };
      child.stdout!.on('data', onData);
      child.stderr!.on('data', (d: Buffer) => (out += d.toString()));
      child.once('exit', (code) => reject(new Error(`server exited (${code}):\n${out}`)));
    });
    return child;
  }

  it('loses and doubles nothing: the gateway re-sends what was not acknowledged', async () => {
    const gw = await freshGateway();
    const port = await freePort();
    let server = await startServer(port);
    // A gateway that reconnects and re-sends its unacknowledged QoS 1 messages (mqtt.js keeps them).
    const client = await connectGateway(port, gw.gatewayId, gw.token, { reconnectPeriod: 100, clean: false, clientId: `gw-${gw.gatewayId}` });
    const s = stream(client, gw.gatewayId, 5);
    await new Promise((r) => setTimeout(r, 1_500));
    const exited = new Promise((r) => server.once('exit', r));
    server.kill('SIGKILL');
    await exited;
    const sentAtKill = s.sent;
    await new Promise((r) => setTimeout(r, 300));
    server = await startServer(port);
    await new Promise((r) => setTimeout(r, 1_000));
    const batches = await s.stop();
    expect(batches).toBeGreaterThan(sentAtKill);
    await client.endAsync();
    await expectExactlyOnce(gw.gatewayId, batches);
    server.kill('SIGTERM');
  });
});

describe('PostgreSQL restart mid-stream', () => {
  let cluster: Cluster | undefined;
  let dir: string | undefined;
  // Test files share one process: hand the run's own database back to the files after this one.
  const runDatabaseUrl = process.env['DATABASE_URL'];
  afterAll(async () => {
    await closeDb();
    cluster?.stop();
    if (dir) rmSync(dir, { recursive: true, force: true });
    process.env['DATABASE_URL'] = runDatabaseUrl;
  });

  it('holds batches while the database is down and stores each exactly once after', async () => {
    // A cluster of its own, so stopping it does not disturb other test files.
    await closeDb();
    dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-pgrestart-'));
    chmodSync(dir, 0o755);
    cluster = await startCluster(dir, { dbName: 'fringewise_restart' });
    process.env['DATABASE_URL'] = cluster.url;
    const { migrateDatabase } = await import('../../src/lib/server/db/migrate.ts');
    await migrateDatabase();

    const t = await startTestLive();
    const gw = await freshGateway();
    const client = await connectGateway(t.mqttPort, gw.gatewayId, gw.token);
    const s = stream(client, gw.gatewayId, 10);
    await new Promise((r) => setTimeout(r, 1_000));
    cluster.stop();
    const sentAtStop = s.sent;
    await new Promise((r) => setTimeout(r, 2_000));
    cluster = await startCluster(dir, { dbName: 'fringewise_restart' });
    await new Promise((r) => setTimeout(r, 1_000));
    const batches = await s.stop();
    expect(batches).toBeGreaterThan(sentAtStop + 100);
    expect(client.connected).toBe(true);
    await client.endAsync();
    await expectExactlyOnce(gw.gatewayId, batches);
    await t.close();
  });
});
