// The rollup journal: live ingest lists each stored row in rollup_pending and adds its sums in a
// statement of its own. Answers from rollups are exact while rows wait there, a writer rolls up
// what a killed one left listed before it stores more of that gateway, and a rollup statement
// whose outcome is unknown is recovered from the database without counting anything twice.
import pg from 'pg';
import { afterEach, describe, expect, it } from 'vitest';
import { queryCounts } from '../../src/lib/server/counts-query.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { RollupJournal } from '../../src/lib/server/ingest/rollup-journal.ts';
import { BatchWriter } from '../../src/lib/server/ingest/store.ts';
import { rollupDeltas } from '../../src/lib/server/ingest/rollup-math.ts';
import { writeStatement, type StoredSlice } from '../../src/lib/server/ingest/write-statement.ts';
import type { Slice } from '../../src/lib/server/ingest/coverage.ts';
import { freshGateway, makeBatch, rolledUp } from '../helpers/live-path.ts';

const BASE = Math.floor(Date.now() / 3_600_000) * 3_600_000 - 3 * 3_600_000;
const query = pg.Client.prototype.query;
afterEach(() => {
  pg.Client.prototype.query = query;
});

/** Stores bins as a write does, listing them in the journal (or rolling them up at once), with no writer to roll them up later: a server killed right after its write. */
async function storeListed(gatewayId: string, t0: number, n: number, seq: number, mode: 'journal' | 'now' = 'journal'): Promise<void> {
  const b = makeBatch(t0, n, seq, { value: (k, i) => (k === 'a' ? 3 : 5) + (i % 7) });
  const stored: StoredSlice[] = [{ gatewayId, boot: b.boot, seq, slice: { t0, dt: b.dt, n, keys: ['a', 'b'], channels: [b.ch['a']!, b.ch['b']!], x: null, cc: null } }];
  const { text, values } = writeStatement(stored, mode === 'journal' ? 'journal' : rollupDeltas(stored), [[gatewayId, 'a'], [gatewayId, 'b']], new Map());
  await getDbHandle().pool.query(text, values);
}

/**
 * Makes the journal's next rollup statement fail as a dropped connection does: before it reaches
 * the database, or after it committed with the reply lost. The pool calls `query` with a callback.
 */
function failNextRollup(when: 'before-commit' | 'after-commit'): { fired: boolean } {
  const fault = { fired: false };
  pg.Client.prototype.query = function (this: pg.Client, ...args: unknown[]) {
    const cb = args.at(-1);
    if (fault.fired || (args[0] as { name?: string } | undefined)?.name !== 'rollup-journal' || typeof cb !== 'function') return (query as (...a: unknown[]) => unknown).apply(this, args);
    fault.fired = true;
    const lost = new Error('Connection terminated unexpectedly');
    if (when === 'before-commit') return void setImmediate(() => cb(lost));
    return (query as (...a: unknown[]) => unknown).apply(this, [...args.slice(0, -1), () => cb(lost)]);
  } as typeof query;
  return fault;
}

/** One-bin slices of channel `a`, each count 1, contiguous from BASE + `offset` ms: the writer merges them into one row. */
function oneBinSlices(n: number, offset = 0): Slice[] {
  return Array.from({ length: n }, (_, i) => ({ t0: BASE + offset + i * 10, dt: 10, n: 1, keys: ['a'], channels: [[1]], x: null, cc: null }));
}

/** Stores the slices as one write (one row when contiguous), listed in the journal. */
async function storeRow(gatewayId: string, parts: Slice[]): Promise<void> {
  const stored: StoredSlice[] = parts.map((slice, i) => ({ gatewayId, boot: 'b', seq: i, slice }));
  const { text, values } = writeStatement(stored, 'journal', [[gatewayId, 'a']], new Map());
  await getDbHandle().pool.query(text, values);
}

async function pendingRows(gatewayId: string): Promise<number> {
  return (await getDbHandle().pool.query('select 1 from rollup_pending where gateway_id = $1', [gatewayId])).rowCount ?? 0;
}

async function rollupSum(gatewayId: string, stepMs: number): Promise<number> {
  const { rows } = await getDbHandle().pool.query<{ s: number }>(`select coalesce(sum(v), 0)::int8 as s from rollups r, unnest(r.sums) v where r.gateway_id = $1 and r.step_ms = $2`, [gatewayId, stepMs]);
  return rows[0]!.s;
}

/** Sums per channel over [from, to) at `step`, and the same from raw bins (the reference). */
async function bothWays(benchId: string, gatewayId: string, from: number, to: number, step: number) {
  const total = (r: Awaited<ReturnType<typeof queryCounts>>) => Object.fromEntries(Object.entries(r.channels).map(([k, v]) => [k, v.reduce<number>((a, x) => a + (x ?? 0), 0)]));
  const rolled = await queryCounts(benchId, from, to, step);
  const raw = await queryCounts(benchId, from, to, 10);
  return { rolled: total(rolled), raw: total(raw), covered: rolled.coveredMs[gatewayId]!.reduce((a, x) => a + x, 0) };
}

/** Both levels of rollups hold exactly the counts of the raw bins in [BASE, to). */
async function expectRollupsHoldRaw(gw: { benchId: string; gatewayId: string }, to: number): Promise<void> {
  const { raw } = await bothWays(gw.benchId, gw.gatewayId, BASE, to, 10);
  const rawTotal = Object.values(raw).reduce((a, x) => a + x, 0);
  for (const step of [1_000, 60_000]) expect(await rollupSum(gw.gatewayId, step)).toBe(rawTotal);
}

describe('rollup journal', () => {
  it('answers from rollups exactly while rows wait in the journal, alone or beside rolled-up bins of the same second', async () => {
    const gw = await freshGateway();
    await storeListed(gw.gatewayId, BASE, 50, 0, 'now');
    await storeListed(gw.gatewayId, BASE + 500, 50, 1);
    await storeListed(gw.gatewayId, BASE + 61_000, 100, 2);
    expect(await pendingRows(gw.gatewayId)).toBe(2);
    for (const step of [1_000, 60_000]) {
      const { rolled, raw, covered } = await bothWays(gw.benchId, gw.gatewayId, BASE, BASE + 120_000, step);
      expect(rolled).toEqual(raw);
      expect(raw[`${gw.gatewayId}/a`]).toBeGreaterThan(0);
      // 200 bins of 10 ms.
      expect(covered).toBe(2_000);
    }
  });

  it('rolls up what a killed writer left listed before storing more of that gateway', async () => {
    const gw = await freshGateway();
    await storeListed(gw.gatewayId, BASE, 100, 0);
    await storeListed(gw.gatewayId, BASE + 1_000, 100, 1);
    const writer = new BatchWriter(() => undefined);
    expect(await writer.submit(gw.gatewayId, makeBatch(BASE + 2_000, 100, 2))).toMatchObject({ kind: 'stored' });
    await writer.flushed();
    expect(await pendingRows(gw.gatewayId)).toBe(0);
    await expectRollupsHoldRaw(gw, BASE + 3_000);
  });

  it('recovers a rollup statement whose reply is lost after COMMIT without counting it twice', async () => {
    const gw = await freshGateway();
    const writer = new BatchWriter(() => undefined);
    await writer.submit(gw.gatewayId, makeBatch(BASE, 100, 0));
    await writer.flushed();
    const fault = failNextRollup('after-commit');
    await writer.submit(gw.gatewayId, makeBatch(BASE + 1_000, 100, 1));
    await writer.flushed();
    expect(fault.fired).toBe(true);
    // The next write of the gateway recovers it first: nothing is listed any more, so nothing is added again.
    await writer.submit(gw.gatewayId, makeBatch(BASE + 2_000, 100, 2));
    await writer.flushed();
    await rolledUp(gw.gatewayId);
    await expectRollupsHoldRaw(gw, BASE + 3_000);
  });

  it('recovers a rollup statement that failed before COMMIT, adding it once', async () => {
    const gw = await freshGateway();
    const writer = new BatchWriter(() => undefined);
    await writer.submit(gw.gatewayId, makeBatch(BASE, 100, 0));
    await writer.flushed();
    const fault = failNextRollup('before-commit');
    await writer.submit(gw.gatewayId, makeBatch(BASE + 1_000, 100, 1));
    await writer.flushed();
    expect(fault.fired).toBe(true);
    expect(await pendingRows(gw.gatewayId)).toBe(1);
    // Still exact while it waits.
    const waiting = await bothWays(gw.benchId, gw.gatewayId, BASE, BASE + 2_000, 1_000);
    expect(waiting.rolled).toEqual(waiting.raw);
    await writer.submit(gw.gatewayId, makeBatch(BASE + 2_000, 100, 2));
    await writer.flushed();
    await rolledUp(gw.gatewayId);
    await expectRollupsHoldRaw(gw, BASE + 3_000);
  });

  it('holds the writer back while too many counts wait to be rolled up, and lets it go once they are', async () => {
    const gw = await freshGateway();
    const journal = new RollupJournal();
    await journal.recover([gw.gatewayId]);
    await expect(journal.room()).resolves.toBeUndefined();
    const n = 2_000_000;
    await storeRow(gw.gatewayId, [{ t0: BASE, dt: 1, n, keys: ['a'], channels: [new Array<number>(n).fill(1)], x: null, cc: null }]);
    journal.add([{ gatewayId: gw.gatewayId, t0: BASE, parts: [{ t0: BASE, dt: 1, n, keys: ['a'], channels: [new Array<number>(n).fill(1)], x: null, cc: null }] }]);
    let roomy = false;
    const room = journal.room().then(() => (roomy = true));
    await new Promise((r) => setTimeout(r, 20));
    expect(roomy).toBe(false);
    await journal.settled();
    await room;
    expect(await rollupSum(gw.gatewayId, 1_000)).toBe(n);
  });

  it('rolls a row up whole or not at all: a row of 5,001 slices whose statement fails is recovered whole', async () => {
    const gw = await freshGateway();
    const parts = oneBinSlices(5_001);
    const journal = new RollupJournal();
    await journal.recover([gw.gatewayId]);
    await storeRow(gw.gatewayId, parts);
    journal.add([{ gatewayId: gw.gatewayId, t0: BASE, parts }]);
    const fault = failNextRollup('before-commit');
    await journal.settled();
    expect(fault.fired).toBe(true);
    // Still listed, and still counted by the reader, until the gateway is recovered.
    expect(await pendingRows(gw.gatewayId)).toBe(1);
    expect(journal.isRecovered(gw.gatewayId)).toBe(false);
    const waiting = await bothWays(gw.benchId, gw.gatewayId, BASE, BASE + 60_000, 1_000);
    expect(waiting.rolled).toEqual(waiting.raw);
    await journal.recover([gw.gatewayId]);
    expect(await pendingRows(gw.gatewayId)).toBe(0);
    expect(await rollupSum(gw.gatewayId, 1_000)).toBe(5_001);
  });

  it('adds nothing for rows another process rolled up meanwhile (two servers on one gateway), and counts each once', async () => {
    const gw = await freshGateway();
    const parts = oneBinSlices(10);
    await storeRow(gw.gatewayId, parts);
    const first = new RollupJournal();
    await first.recover([gw.gatewayId]);
    await storeRow(gw.gatewayId, oneBinSlices(10, 1_000));
    first.add([{ gatewayId: gw.gatewayId, t0: BASE + 1_000, parts: oneBinSlices(10, 1_000) }]);
    // A second server takes the gateway up (a deploy overlapping the old process) before the first rolls up.
    await new RollupJournal().recover([gw.gatewayId]);
    await first.settled();
    expect(await pendingRows(gw.gatewayId)).toBe(0);
    expect(await rollupSum(gw.gatewayId, 1_000)).toBe(20);
    // The first forgot the gateway when its statement found the row gone: its next write recovers it, finding nothing.
    expect(first.isRecovered(gw.gatewayId)).toBe(false);
  });

  it('sweeps up rows listed long ago by a process that is gone, for a gateway that never sends again', async () => {
    const gw = await freshGateway();
    await storeListed(gw.gatewayId, BASE, 100, 0);
    const journal = new RollupJournal();
    await journal.sweep();
    expect(await pendingRows(gw.gatewayId)).toBe(1);
    await getDbHandle().pool.query(`update count_batches set received_at = now() - interval '1 minute' where gateway_id = $1`, [gw.gatewayId]);
    await journal.sweep();
    expect(await pendingRows(gw.gatewayId)).toBe(0);
    await expectRollupsHoldRaw(gw, BASE + 1_000);
  });
});
