// The rollup journal. Live ingest's write lists each raw row it inserts in rollup_pending, in its
// one statement, and leaves the row's rollup sums to a statement of their own a moment later, off
// the path from a gateway's publish to the browsers (the sums were about a third of the write's
// work: DEVELOPERS.md, "Ingest benchmark"). That statement deletes the entries of the rows it rolls
// up, by exact key, and adds their sums; if any entry is gone it adds nothing
// (rollup_journal_check, migration 0013), so a row's sums are added once whatever else rolled it
// up. Readers of rollups add the raw rows still listed, in the same snapshot (counts-query.ts).
//
// When a statement's outcome is unknown (an error, or a reply lost after COMMIT), the journal
// forgets its gateways and recovers them from the database instead: their listed rows are read
// back and rolled up before the writer stores anything more of theirs. A gateway this process has
// not recovered yet (first sight after a start) is recovered the same way, and a sweep recovers
// rows listed for long, so what a killed server left listed is rolled up by the next one even for
// a gateway that never sends again.
//
// The queued rows share their count arrays with the live messages and the analysis: none of them
// may change a batch's arrays in place.
import { getDbHandle } from '../db/index.ts';
import { channelArrays, unpackRow } from '../db/packed-counts.ts';
import type { Slice } from './coverage.ts';
import { rollupDeltas, type RollupDelta } from './rollup-math.ts';
import { rollupUpsertSql, rollupUpsertValues } from './rollup-upsert.ts';

/** An inserted row: its key, and the slices it was written from (row-merge.ts). */
export interface ListedRow {
  gatewayId: string;
  t0: number;
  parts: Slice[];
}

/**
 * How long committed rows wait to be rolled up together: the rollup statements stay few (ten a
 * second at most while the ingest keeps up) beside the writes. Readers are exact meanwhile.
 */
const FLUSH_DELAY_MS = 100;
/** Most rows rolled up by one statement; a row is never split between two. */
const MAX_PER_STATEMENT = 5_000;
/**
 * Most counts waiting (about 8 bytes each): past this the writer waits before its next write, so a
 * database that cannot keep up with the rollups slows the ingest (and the broker's
 * acknowledgements) instead of growing this queue without bound.
 */
const MAX_QUEUED_COUNTS = 2_000_000;
/** Most listed rows read back by one recovery step. */
const RECOVER_ROWS = 500;
/** How often a server looks for rows a dead process left listed (`sweep`). */
export const SWEEP_EVERY_MS = 60_000;
/** Rows listed longer than this are a dead process's (a live one rolls up within FLUSH_DELAY_MS), swept up. */
const ABANDONED_AFTER_S = 30;

const countsOf = (r: ListedRow) => r.parts.reduce((n, s) => n + s.n * (s.keys.length + (s.cc ? 1 : 0)), 0);

const SQL = `
with done as (
  delete from rollup_pending p using unnest($1::text[], $2::int8[]) as u(gw, t0)
   where p.gateway_id = u.gw and p.t0 = u.t0
  returning 1
), rolled as (
  ${rollupUpsertSql(3)}
)
select rollup_journal_check((select count(*) from done), $9)`;

/** A stored row as a slice (its counts are channel-major). */
export function sliceOfRow(r: { t0: number; dt: number; n: number; keys: string[]; counts: number[]; cc: number[] | null }): Slice {
  return { t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, channels: channelArrays(r), x: null, cc: r.cc };
}

/** Deletes the entries of these rows and adds the deltas, in one statement that changes nothing unless every entry was there. */
async function rollUp(keys: { gatewayId: string; t0: number }[], deltas: RollupDelta[]): Promise<void> {
  await getDbHandle().pool.query({
    name: 'rollup-journal',
    text: SQL,
    values: [keys.map((k) => k.gatewayId), keys.map((k) => k.t0), ...rollupUpsertValues(deltas), keys.length],
  });
}

export class RollupJournal {
  private queue: ListedRow[] = [];
  /** Gateways whose every listed row written since is queued here or rolled up. */
  private recovered = new Set<string>();
  /** Rollup statements and recoveries run one at a time, in order. */
  private lane: Promise<void> = Promise.resolve();
  private scheduled = false;
  private queuedCounts = 0;
  private waitingForRoom: (() => void)[] = [];

  isRecovered(gatewayId: string): boolean {
    return this.recovered.has(gatewayId);
  }

  /** Queues committed rows for rolling up; those of a gateway not recovered stay listed for its recovery. */
  add(rows: ListedRow[]): void {
    for (const row of rows) {
      if (!this.recovered.has(row.gatewayId)) continue;
      this.queue.push(row);
      this.queuedCounts += countsOf(row);
    }
    if (this.scheduled || !this.queue.length) return;
    this.scheduled = true;
    setTimeout(() => {
      this.scheduled = false;
      void this.inLane(() => this.flush());
    }, FLUSH_DELAY_MS);
  }

  /** After a write or rollup whose outcome is unknown: what is listed of these gateways is read back from the database. */
  forget(gatewayIds: Iterable<string>): void {
    for (const g of gatewayIds) this.recovered.delete(g);
    // Their queued rows are listed in the database too: they are rolled up from there.
    this.queue = this.queue.filter((r) => this.recovered.has(r.gatewayId));
    this.queuedCounts = this.queue.reduce((n, r) => n + countsOf(r), 0);
    this.makeRoom();
  }

  /** Resolves once these gateways' listed rows are rolled up; rejects if the database cannot be read or written. */
  recover(gatewayIds: string[]): Promise<void> {
    return this.inLane(() => this.recoverNow(gatewayIds));
  }

  /** Recovers the gateways with rows listed for long that this process does not hold: a dead process's. */
  async sweep(): Promise<void> {
    const { rows } = await getDbHandle().pool.query<{ gateway_id: string }>(
      `select distinct p.gateway_id from rollup_pending p left join count_batches c on c.gateway_id = p.gateway_id and c.t0 = p.t0
        where c.received_at is null or c.received_at < now() - make_interval(secs => $1)`,
      [ABANDONED_AFTER_S],
    );
    const abandoned = rows.map((r) => r.gateway_id).filter((g) => !this.recovered.has(g));
    if (abandoned.length) await this.recover(abandoned);
  }

  /** Resolves at once unless too many counts wait to be rolled up; then when few enough do. */
  room(): Promise<void> {
    if (this.queuedCounts < MAX_QUEUED_COUNTS) return Promise.resolve();
    return new Promise((resolve) => this.waitingForRoom.push(resolve));
  }

  /** Resolves when nothing is queued or running (rows of forgotten gateways wait for their recovery). */
  async settled(): Promise<void> {
    for (;;) {
      await this.lane;
      if (!this.scheduled && !this.queue.length) return;
      await new Promise((resolve) => setTimeout(resolve, FLUSH_DELAY_MS));
    }
  }

  private makeRoom(): void {
    if (this.queuedCounts < MAX_QUEUED_COUNTS) for (const resolve of this.waitingForRoom.splice(0)) resolve();
  }

  private inLane(task: () => Promise<void>): Promise<void> {
    const run = this.lane.then(task);
    this.lane = run.catch(() => undefined);
    return run;
  }

  private async flush(): Promise<void> {
    while (this.queue.length) {
      const rows = this.queue.splice(0, MAX_PER_STATEMENT);
      for (const r of rows) this.queuedCounts -= countsOf(r);
      this.makeRoom();
      try {
        await rollUp(rows, rollupDeltas(rows.flatMap((r) => r.parts.map((slice) => ({ gatewayId: r.gatewayId, slice })))));
      } catch (err) {
        console.warn('[ingest] rollups deferred to recovery:', err instanceof Error ? err.message : String(err));
        this.forget(new Set(rows.map((r) => r.gatewayId)));
      }
    }
  }

  private async recoverNow(gatewayIds: string[]): Promise<void> {
    const todo = gatewayIds.filter((g) => !this.recovered.has(g));
    if (!todo.length) return;
    let raced = 0;
    for (;;) {
      // A listed row whose raw row is gone leaves its entry only.
      const { rows } = await getDbHandle().pool.query<{ gateway_id: string; t0: number; dt: number | null; n: number | null; keys: string[] | null; counts: Buffer | null; cc: Buffer | null }>(
        `select p.gateway_id, p.t0, c.dt, c.n, c.keys, c.counts, c.cc
           from rollup_pending p left join count_batches c on c.gateway_id = p.gateway_id and c.t0 = p.t0
          where p.gateway_id = any($1::text[])
          order by p.gateway_id, p.t0
          limit $2`,
        [todo, RECOVER_ROWS],
      );
      const stored: { gatewayId: string; slice: Slice }[] = [];
      for (const r of rows) {
        if (r.counts === null || r.dt === null || r.n === null || r.keys === null) continue;
        try {
          stored.push({ gatewayId: r.gateway_id, slice: sliceOfRow(unpackRow({ t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, counts: r.counts, cc: r.cc })) });
        } catch (err) {
          // A row no reader can read either: its entry goes, so the gateway's ingest goes on.
          console.error(`[ingest] ${r.gateway_id} row at ${r.t0} cannot be rolled up:`, err instanceof Error ? err.message : String(err));
        }
      }
      try {
        if (rows.length) await rollUp(rows.map((r) => ({ gatewayId: r.gateway_id, t0: r.t0 })), rollupDeltas(stored));
      } catch (err) {
        // Another process rolled some of them up meanwhile (the check undid this statement): read again.
        if ((err as { code?: unknown }).code === 'P0001' && ++raced < 5) continue;
        throw err;
      }
      if (rows.length < RECOVER_ROWS) break;
    }
    for (const g of todo) this.recovered.add(g);
  }
}
