// An imported recording is kept from retention when it is imported, however old it is: a lab
// imports an old recording to keep and compare it, and one past raw retention lost its raw bins at
// the next pass. Released like any run, retention then trims it. And the live page's passes are
// the bench's own gateways', never an import's.
import { and, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { sweepsBetween } from '../../src/lib/server/analysis/sweeps-store.ts';
import { closeDb, getDb } from '../../src/lib/server/db/index.ts';
import { auditLog, countBatches, rollups, runs, sweeps } from '../../src/lib/server/db/schema.ts';
import { importCounts } from '../../src/lib/server/export/import.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { DEFAULT_RETENTION, getRetention, runRetention, setRetention } from '../../src/lib/server/retention.ts';
import { loadRunReport } from '../../src/lib/server/run-report.ts';
import { setRunKeep } from '../../src/lib/server/runs.ts';
import { userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `ik-${tag}`;
const LIVE_GW = `ik-${tag}-gw`;
const DAY = 86_400_000;
const NOW = Math.floor(Date.now() / 60_000) * 60_000;
let operatorId: string;
let before: Awaited<ReturnType<typeof getRetention>>;

/** Ten minutes of 1 s bins from t0, as the export writes them. */
function csv(t0: number): ReadableStream<Uint8Array> {
  const rows = ['t_ms,a,b'];
  for (let i = 0; i < 600; i++) rows.push(`${t0 + i * 1000},${100 + (i % 7)},${80 + (i % 5)}`);
  return new Blob([rows.join('\n') + '\n']).stream();
}

const stored = async (gatewayId: string) => ({
  raw: (await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gatewayId))).length,
  fine: (await getDb().select({ t: rollups.blockT0 }).from(rollups).where(and(eq(rollups.gatewayId, gatewayId), eq(rollups.stepMs, 1000)))).length,
  coarse: (await getDb().select({ t: rollups.blockT0 }).from(rollups).where(and(eq(rollups.gatewayId, gatewayId), eq(rollups.stepMs, 60_000)))).length,
});

beforeAll(async () => {
  await createBench({ id: BENCH, name: 'Import keep bench', wavelengthNm: 780 });
  await createGateway(LIVE_GW, BENCH);
  operatorId = (await userWithToken('operator', 'ik')).id;
  before = await getRetention();
  // Raw at the default 30 days; the sums short enough that a 60-day-old recording is past them all.
  await setRetention({ ...DEFAULT_RETENTION, fineDays: 40, coarseDays: 50 }, null);
});

afterAll(async () => {
  await setRetention(before, null);
  await closeDb();
});

describe('an imported recording', () => {
  it('60 days old is kept through a retention pass, and trimmed once released', async () => {
    const r = await importCounts(BENCH, csv(NOW - 60 * DAY), { title: 'Old calibration', userId: operatorId });
    expect(r.keep).toBe(true);
    const [run] = await getDb().select({ keep: runs.keep, source: runs.source }).from(runs).where(eq(runs.id, r.runId));
    expect(run).toEqual({ keep: true, source: 'import' });
    // The import's audit row says it was kept.
    const [audit] = await getDb().select({ after: auditLog.after }).from(auditLog).where(and(eq(auditLog.entity, 'run'), eq(auditLog.entityId, String(r.runId)), eq(auditLog.action, 'import')));
    expect((audit?.after as { keep?: boolean }).keep).toBe(true);

    const full = await stored(r.gatewayId);
    expect(full.raw).toBeGreaterThan(0);
    expect(full.fine).toBeGreaterThan(0);
    expect(full.coarse).toBeGreaterThan(0);
    await runRetention({ now: NOW, pauseMs: 0 });
    expect(await stored(r.gatewayId)).toEqual(full);
    // So its report still has photon statistics, read from the raw bins, and its stability is read
    // at whole seconds, the file's bin width.
    const report = await loadRunReport(r.runId);
    expect(report?.photonStats).not.toBeNull();
    expect(report?.stability.tau0).toBe(1);

    // Released as any run is (audited), the next pass trims it as it would any data of its age.
    await setRunKeep(r.runId, false, operatorId);
    await runRetention({ now: NOW, pauseMs: 0 });
    expect(await stored(r.gatewayId)).toEqual({ raw: 0, fine: 0, coarse: 0 });
  });

  it('inside retention is kept the same way', async () => {
    const r = await importCounts(BENCH, csv(NOW - 2 * DAY), { title: 'Recent offline scan', userId: operatorId });
    expect(r.keep).toBe(true);
    const [run] = await getDb().select({ keep: runs.keep }).from(runs).where(eq(runs.id, r.runId));
    expect(run?.keep).toBe(true);
    const full = await stored(r.gatewayId);
    await runRetention({ now: NOW, pauseMs: 0 });
    expect(await stored(r.gatewayId)).toEqual(full);
  });
});

describe('the live passes of a bench', () => {
  it('leave out the passes of an imported recording, even newer ones', async () => {
    // A recording of the last hour imported while the bench's own gateway swept earlier on.
    const r = await importCounts(BENCH, csv(NOW - 20 * 60_000), { title: 'Offline gateway, today', userId: operatorId });
    const pass = (startMs: number, visibility: number) => ({ benchId: BENCH, startMs, endMs: startMs + 60_000, direction: 'up' as const, visibility, visibilityErr: 0.01, phase: 0, phaseErr: 0.01, periodX: 10, periodXErr: 0.1, counts: 1e5, fit: {} });
    await getDb()
      .insert(sweeps)
      .values([pass(NOW - 25 * 60_000, 0.9), pass(r.fromMs + 60_000, 0.4)]);
    const all = await sweepsBetween(BENCH, NOW - 30 * 60_000, NOW);
    expect(all.rows.map((s) => s.visibility)).toEqual([0.9, 0.4]);
    const live = await sweepsBetween(BENCH, NOW - 30 * 60_000, NOW, undefined, undefined, 'live');
    expect(live.rows.map((s) => s.visibility)).toEqual([0.9]);
  });
});
