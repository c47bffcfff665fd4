// Retention deletes exactly what is older than each level's limit, in bounded steps, and nothing
// that overlaps a kept run of the gateway's bench; the local outbox's mail goes by its own limit,
// and mail still waiting to be sent is never touched.
import { eq, inArray, sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, getDb } from '../../src/lib/server/db/index.ts';
import { caughtMail, channels, countBatches, rollupPending, rollups, runs, settings } from '../../src/lib/server/db/schema.ts';
import { MailPolicy, mailPolicyStateSchema } from '../../src/lib/server/alarms/mail-policy.ts';
import { packCounts } from '../../src/lib/server/db/packed-counts.ts';
import { createBench, createGateway } from '../../src/lib/server/provisioning.ts';
import { DEFAULT_RETENTION, getRetention, runRetention, setRetention, storageUsage } from '../../src/lib/server/retention.ts';
import { setRunKeep } from '../../src/lib/server/runs.ts';
import { loadRunReport } from '../../src/lib/server/run-report.ts';
import { userWithToken } from '../helpers/web-app.ts';

const tag = `${process.pid.toString(36)}${Date.now().toString(36)}`.slice(-8);
const BENCH = `rt-${tag}`;
const GW = `rt-${tag}-gw`;
const DAY = 86_400_000;
const NOW = Math.floor(Date.now() / 60_000) * 60_000;

/** A one-minute raw batch (60 bins of 1 s) starting at t0. */
const raw = (t0: number) => ({ gatewayId: GW, t0, t1: t0 + 60_000, dt: 1000, n: 60, keys: ['a'], counts: packCounts(Array<number>(60).fill(7)), boot: 'b', seq: 0 });
const block = (stepMs: number, blockT0: number) => ({ gatewayId: GW, key: 'a', stepMs, blockT0, sums: Array<number>(60).fill(1), bins: Array<number>(60).fill(1) });

// Raw limit 10 days, 1 s rollups 20 days, 1 min rollups 40 days.
const ageDays = [5, 15, 25, 30, 45, 50];
const keptDay = 30; // a kept run covers one hour around 30 days ago

beforeAll(async () => {
  await createBench({ id: BENCH, name: 'Retention bench', wavelengthNm: 633 });
  await createGateway(GW, BENCH);
  const db = getDb();
  await db.insert(countBatches).values(ageDays.map((d) => raw(NOW - d * DAY)));
  await db.insert(rollups).values(ageDays.flatMap((d) => [block(1000, Math.floor((NOW - d * DAY) / 60_000) * 60_000), block(60_000, Math.floor((NOW - d * DAY) / 3_600_000) * 3_600_000)]));
  await db.insert(runs).values([
    { benchId: BENCH, title: 'Kept calibration', startMs: NOW - keptDay * DAY - 1_800_000, endMs: NOW - keptDay * DAY + 1_800_000, keep: true },
    // Not kept: no protection.
    { benchId: BENCH, title: 'Ordinary', startMs: NOW - 45 * DAY - 1_800_000, endMs: NOW - 45 * DAY + 1_800_000, keep: false },
  ]);
});

afterAll(async () => closeDb());

describe('retention', () => {
  it('refuses settings that keep finer data longer than coarser data', async () => {
    await expect(setRetention({ rawDays: 30, fineDays: 10, coarseDays: 40, mailDays: 90 }, null)).rejects.toThrow();
  });

  it('estimates a large raw table from the 1 min sums instead of counting its rows', async () => {
    const of = (u: Awaited<ReturnType<typeof storageUsage>>) => u.rows.find((r) => r.benchId === BENCH && r.level === 'raw')!;
    const exact = of(await storageUsage());
    const estimate = of(await storageUsage({ exactRawRows: -1 }));
    expect(exact.estimated).toBe(false);
    expect(estimate.estimated).toBe(true);
    // Every raw bin of this bench has its 1 min sum, so the estimate meets the count.
    expect(estimate.values).toBe(exact.values);
    expect(estimate.oldestMs).toBe(exact.oldestMs);
  });

  it('deletes exactly what is past each limit, and nothing of a kept run', async () => {
    await setRetention({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: 90 }, null);
    expect(await getRetention()).toEqual({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: 90 });
    const before = await storageUsage();
    expect(before.rows.find((r) => r.benchId === BENCH && r.level === 'raw')?.rows).toBe(ageDays.length);

    // Steps of 1 row: exercises the bounded loop.
    const result = await runRetention({ now: NOW, stepRows: 1, pauseMs: 0 });
    const db = getDb();
    const ages = (ts: number[]) => ts.map((t) => Math.round((NOW - t) / DAY)).sort((a, b) => a - b);
    const rawLeft = await db.select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, GW));
    expect(ages(rawLeft.map((r) => r.t0))).toEqual([5, 30]);
    const fineLeft = await db.select({ t: rollups.blockT0, step: rollups.stepMs }).from(rollups).where(eq(rollups.gatewayId, GW));
    expect(ages(fineLeft.filter((r) => r.step === 1000).map((r) => r.t))).toEqual([5, 15, 30]);
    expect(ages(fineLeft.filter((r) => r.step === 60_000).map((r) => r.t))).toEqual([5, 15, 25, 30]);
    expect(result.deleted.raw).toBeGreaterThanOrEqual(4);
    expect(result.error).toBeUndefined();

    // A second pass finds nothing more of this gateway.
    await runRetention({ now: NOW, stepRows: 1, pauseMs: 0 });
    expect(await db.select().from(countBatches).where(inArray(countBatches.gatewayId, [GW]))).toHaveLength(2);
  });
});

describe('retention while a run is marked to keep', () => {
  it('spares a run marked to keep while a pass is under way', async () => {
    const gw = `${GW}-k`;
    await createGateway(gw, BENCH);
    const start = NOW - 100 * DAY;
    const minutes = 40;
    await getDb()
      .insert(countBatches)
      .values(Array.from({ length: minutes }, (_, i) => ({ ...raw(start + i * 60_000), gatewayId: gw, seq: i })));
    // The run covers the last 20 minutes, which a pass walking the key in time order reaches last.
    const [run] = await getDb().insert(runs).values({ benchId: BENCH, title: 'Kept mid-pass', startMs: start + 20 * 60_000, endMs: start + minutes * 60_000 }).returning({ id: runs.id });
    const { id: userId } = await userWithToken('operator', 'rt-keep');
    await setRetention({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: 90 }, null);
    const left = async () => (await getDb().select({ n: sql<number>`count(*)::int` }).from(countBatches).where(eq(countBatches.gatewayId, gw)))[0]!.n;

    // One row a step, 50 ms apart: the pass spends about a second on the first 20 minutes.
    const pass = runRetention({ now: NOW, stepRows: 1, pauseMs: 50 });
    while ((await left()) > minutes - 3) await new Promise((r) => setTimeout(r, 10));
    await setRunKeep(run!.id, true, userId);
    await pass;

    const kept = await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw));
    expect(kept.map((r) => (r.t0 - start) / 60_000).sort((a, b) => a - b)).toEqual(Array.from({ length: 20 }, (_, i) => 20 + i));
  });
});

describe('retention around several kept runs', () => {
  it('keeps every batch that overlaps one, across overlapping runs and runs that start or end inside a batch', async () => {
    const gw = `${GW}-s`;
    await createGateway(gw, BENCH);
    // Clear of the other tests' runs on this bench, which protect its every gateway.
    const start = NOW - 200 * DAY;
    const min = (m: number) => start + m * 60_000;
    await getDb()
      .insert(countBatches)
      .values(Array.from({ length: 180 }, (_, i) => ({ ...raw(min(i)), gatewayId: gw, seq: i })));
    await getDb()
      .insert(runs)
      .values([
        { benchId: BENCH, title: 'Kept A', startMs: min(30), endMs: min(60), keep: true },
        { benchId: BENCH, title: 'Kept B, overlapping A', startMs: min(50), endMs: min(70), keep: true },
        { benchId: BENCH, title: 'Kept C, overlapping B', startMs: min(65), endMs: min(80), keep: true },
        { benchId: BENCH, title: 'Kept D, inside batches', startMs: min(90.5), endMs: min(100.5), keep: true },
        { benchId: BENCH, title: 'Not kept', startMs: min(120), endMs: min(150), keep: false },
      ]);
    await setRetention({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: 90 }, null);
    // Two rows a step: the walk goes on after its last deleted row within each gap.
    const result = await runRetention({ now: NOW, stepRows: 2, pauseMs: 0 });
    const left = await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw));
    const minutes = left.map((r) => (r.t0 - start) / 60_000).sort((a, b) => a - b);
    expect(minutes).toEqual([...Array.from({ length: 50 }, (_, i) => 30 + i), ...Array.from({ length: 11 }, (_, i) => 90 + i)]);
    expect(result.deleted.raw).toBeGreaterThanOrEqual(180 - 61);
  });
});

describe('a run past raw retention', () => {
  it('still lists its channels from the sums that are kept longer', async () => {
    const gw = `${GW}-r`;
    await createGateway(gw, BENCH);
    await getDb()
      .insert(channels)
      .values([
        { gatewayId: gw, key: 'a', benchId: BENCH, role: 'out_a' },
        { gatewayId: gw, key: 'b', benchId: BENCH, role: 'out_b' },
      ]);
    // Ten minutes, 15 days ago: raw bins gone (10 days), 1 s and 1 min sums kept (20 and 40 days).
    const start = Math.floor((NOW - 15 * DAY) / 3_600_000) * 3_600_000;
    const sums = (key: string, stepMs: number, blockT0: number, slots: number) => ({
      gatewayId: gw,
      key,
      stepMs,
      blockT0,
      sums: Array.from({ length: 60 }, (_, i) => (i < slots ? 1_000 : 0)),
      bins: Array.from({ length: 60 }, (_, i) => (i < slots ? 10 : 0)),
    });
    await getDb()
      .insert(rollups)
      .values(['a', 'b'].flatMap((key) => [...Array.from({ length: 10 }, (_, m) => sums(key, 1_000, start + m * 60_000, 60)), sums(key, 60_000, start, 10)]));
    const [run] = await getDb().insert(runs).values({ benchId: BENCH, title: 'Past raw retention', startMs: start, endMs: start + 10 * 60_000 }).returning({ id: runs.id });

    const report = (await loadRunReport(run!.id))!;
    expect(report.photonStats).toBeNull();
    expect(report.channels.map((c) => c.id)).toEqual([`${gw}/a`, `${gw}/b`]);
    // Read from the 1 s sums: 1,000 counts/s over the whole run (no raw bin tells holds from sweeps).
    expect(report.stability.rates.map((r) => [r.channel, r.covers, r.meanRate])).toEqual([
      [`${gw}/a`, 'whole', 1000],
      [`${gw}/b`, 'whole', 1000],
    ]);
  });
});

describe('retention of the local outbox', () => {
  it('reads settings saved before the outbox had a limit with the default one', async () => {
    await getDb()
      .insert(settings)
      .values({ name: 'retention', value: { rawDays: 10, fineDays: 20, coarseDays: 40 } })
      .onConflictDoUpdate({ target: settings.name, set: { value: { rawDays: 10, fineDays: 20, coarseDays: 40 } } });
    expect(await getRetention()).toEqual({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: DEFAULT_RETENTION.mailDays });
  });

  it('refuses a limit under a day or not in whole days, and keeps the one saved', async () => {
    await setRetention({ ...DEFAULT_RETENTION, mailDays: 30 }, null);
    await expect(setRetention({ ...DEFAULT_RETENTION, mailDays: 0 }, null)).rejects.toThrow('at least 1 day');
    await expect(setRetention({ ...DEFAULT_RETENTION, mailDays: 1.5 }, null)).rejects.toThrow('whole days');
    expect((await getRetention()).mailDays).toBe(30);
  });

  it('deletes sent mail past its limit in steps, keeps newer mail and mail still waiting to be sent', async () => {
    const to = (age: number, i: number) => [`mail-${age}d-${i}-${tag}@lab.example`];
    const message = (age: number, i: number) => ({ from: 'fringewise@localhost', to: to(age, i), subject: `${age} days old`, text: '', raw: '', receivedAt: new Date(NOW - age * DAY) });
    // Three messages of one instant at 100 days, as messages written in one transaction share its time.
    const ages = [1, 29, 31, 100, 100, 100, 2000];
    await getDb().insert(caughtMail).values(ages.map((age, i) => message(age, i)));

    // An alarm mail the server did not take, its first try years ago: it waits in the engine's
    // saved state (a row of its own, as engines side by side in tests keep theirs), not in the outbox.
    const policy = new MailPolicy();
    const firstTry = NOW - 2000 * DAY;
    expect(policy.failed({ to: [`waiting-${tag}@lab.example`], subject: 'waiting', text: '' }, firstTry)).toBe(true);
    const stateName = `alarm-mail-${tag}`;
    await getDb().insert(settings).values({ name: stateName, value: policy.state() });

    await setRetention({ ...DEFAULT_RETENTION, mailDays: 30 }, null);
    // Two rows a step: the walk goes on from the last message deleted, through the three of one instant.
    const result = await runRetention({ now: NOW, stepRows: 2, pauseMs: 0 });
    expect(result.error).toBeUndefined();
    expect(result.cutoffs.mail).toBe(NOW - 30 * DAY);
    expect(result.deleted.mail).toBeGreaterThanOrEqual(5);

    const left = await getDb().select({ subject: caughtMail.subject }).from(caughtMail).where(sql`${caughtMail.to}[1] like ${'%-' + tag + '@lab.example'}`);
    expect(left.map((m) => m.subject).sort()).toEqual(['1 days old', '29 days old']);
    const [saved] = await getDb().select().from(settings).where(eq(settings.name, stateName));
    expect(mailPolicyStateSchema.parse(saved!.value).retries).toEqual([expect.objectContaining({ firstAt: firstTry, attempts: 1 })]);

    await setRetention(DEFAULT_RETENTION, null);
  });
});

describe('retention and the rollup journal', () => {
  it('keeps a raw row still listed in the rollup journal until its sums are in the rollups', async () => {
    const gw = `${GW}-j`;
    await createGateway(gw, BENCH);
    const [listed, done] = [NOW - 60 * DAY, NOW - 60 * DAY + 60_000];
    await getDb()
      .insert(countBatches)
      .values([listed, done].map((t0, i) => ({ ...raw(t0), gatewayId: gw, seq: i })));
    await getDb().insert(rollupPending).values({ gatewayId: gw, t0: listed });
    await setRetention({ rawDays: 10, fineDays: 20, coarseDays: 40, mailDays: 90 }, null);
    await runRetention({ now: NOW, stepRows: 10, pauseMs: 0 });
    const left = await getDb().select({ t0: countBatches.t0 }).from(countBatches).where(eq(countBatches.gatewayId, gw));
    expect(left.map((r) => r.t0)).toEqual([listed]);
    await getDb().delete(rollupPending).where(eq(rollupPending.gatewayId, gw));
    await setRetention(DEFAULT_RETENTION, null);
  });
});
