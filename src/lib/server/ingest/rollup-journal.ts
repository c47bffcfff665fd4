// The rollup journal. Live ingest's write lists each raw row it stores in rollup_pending, in its one
// statement, and leaves the row's rollup sums to a statement of their own a moment later, off the
// path from a gateway's publish to the browsers (the sums were about a third of the write's work:
// DEVELOPERS.md, "Ingest benchmark"). That statement adds the sums of what the writer committed and
// deletes those rows' entries, atomically, so each row's sums are added exactly once; readers of
// rollups add the raw rows still listed, in the same snapshot (counts-query.ts), so every answer is
// exact at every moment.
//
// When a statement's outcome is unknown (an error, or a reply lost after COMMIT), the journal
// forgets its gateways and recovers them from the database instead: their listed rows are read back
// and rolled up before the writer stores anything more of theirs. A gateway this process has not
// recovered yet (first sight after a start) is recovered the same way, so what a killed server left
// listed is rolled up by the next one. Like the writer, it assumes one server stores a gateway's
// batches.
import { getDbHandle } from '../db/index.ts';
import { unpackRow } from '../db/packed-counts.ts';
import type { Slice } from './coverage.ts';
import { rollupDeltas, type RollupDelta } from './rollup-math.ts';
import { rollupUpsertSql, rollupUpsertValues } from './rollup-upsert.ts';

interface Entry {
  gatewayId: string;
  slice: Slice;
}

/**
 * How long committed slices wait to be rolled up together: the rollup statements stay few (ten a
 * second at most while the ingest keeps up) beside the writes, and a gateway's batches of that
 * time change each rollup row once. Readers are exact meanwhile.
 */
const FLUSH_DELAY_MS = 100;
/** Most slices rolled up by one statement. */
const MAX_PER_STATEMENT = 5_000;
/**
 * Most counts waiting (about 8 bytes each): past this the writer waits before its next write, so a
 * database that cannot keep up with the rollups slows the ingest (and the broker's
 * acknowledgements) instead of growing this queue without bound.
 */
const MAX_QUEUED_COUNTS = 2_000_000;

const countsOf = (s: Slice) => s.n * (s.keys.length + (s.cc ? 1 : 0));
/** Most listed rows read back by one recovery step. */
const RECOVER_ROWS = 2_000;

// A listed row starts inside one of the spans: the writer merges a gateway's contiguous slices of
// one write into one row starting where the first starts, and a gateway's stored spans never overlap.
const SQL = `
with done as (
  delete from rollup_pending p using unnest($1::text[], $2::int8[], $3::int8[]) as u(gw, t0, t1)
   where p.gateway_id = u.gw and p.t0 >= u.t0 and p.t0 < u.t1
), rolled as (
  ${rollupUpsertSql(4)}
)
select 1`;

/** A stored row as a slice (its counts are channel-major). */
export function sliceOfRow(r: { t0: number; dt: number; n: number; keys: string[]; counts: number[]; cc: number[] | null }): Slice {
  return { t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, channels: r.keys.map((_, k) => r.counts.slice(k * r.n, (k + 1) * r.n)), x: null, cc: r.cc };
}

/** Deletes the entries of rows starting in the spans and adds the deltas, in one statement. `deltas` must be unique per key. */
async function rollUp(spans: { gatewayId: string; t0: number; t1: number }[], deltas: RollupDelta[]): Promise<void> {
  await getDbHandle().pool.query({
    name: 'rollup-journal',
    text: SQL,
    values: [spans.map((s) => s.gatewayId), spans.map((s) => s.t0), spans.map((s) => s.t1), ...rollupUpsertValues(deltas)],
  });
}

export class RollupJournal {
  private queue: Entry[] = [];
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

  /** Queues committed slices for rolling up; those of a gateway not recovered stay listed for its recovery. */
  add(gatewayId: string, slices: Slice[]): void {
    if (!this.recovered.has(gatewayId)) return;
    for (const slice of slices) {
      this.queue.push({ gatewayId, slice });
      this.queuedCounts += countsOf(slice);
    }
    if (this.scheduled) return;
    this.scheduled = true;
    setTimeout(() => {
      this.scheduled = false;
      void this.inLane(() => this.flush());
    }, FLUSH_DELAY_MS);
  }

  /** After a write or rollup whose outcome is unknown: what is listed of these gateways is read back from the database. */
  forget(gatewayIds: Iterable<string>): void {
    for (const g of gatewayIds) this.recovered.delete(g);
    // Queued slices of theirs are listed in the database too: rolling them up from here as well would count them twice.
    this.queue = this.queue.filter((e) => this.recovered.has(e.gatewayId));
    this.queuedCounts = this.queue.reduce((n, e) => n + countsOf(e.slice), 0);
    this.makeRoom();
  }

  private makeRoom(): void {
    if (this.queuedCounts < MAX_QUEUED_COUNTS) for (const resolve of this.waitingForRoom.splice(0)) resolve();
  }

  /** Resolves once these gateways' listed rows are rolled up; rejects if the database cannot be read or written. */
  recover(gatewayIds: string[]): Promise<void> {
    return this.inLane(() => this.recoverNow(gatewayIds));
  }

  /** Resolves at once unless too many counts wait to be rolled up; then when few enough do. */
  room(): Promise<void> {
    if (this.queuedCounts < MAX_QUEUED_COUNTS) return Promise.resolve();
    return new Promise((resolve) => this.waitingForRoom.push(resolve));
  }

  /** Resolves when nothing is queued or running. */
  async settled(): Promise<void> {
    for (;;) {
      await this.lane;
      if (!this.scheduled && !this.queue.length) return;
      await new Promise((resolve) => setTimeout(resolve, FLUSH_DELAY_MS));
    }
  }

  private inLane(task: () => Promise<void>): Promise<void> {
    const run = this.lane.then(task);
    this.lane = run.catch(() => undefined);
    return run;
  }

  private async flush(): Promise<void> {
    while (this.queue.length) {
      const entries = this.queue.splice(0, MAX_PER_STATEMENT);
      for (const e of entries) this.queuedCounts -= countsOf(e.slice);
      this.makeRoom();
      try {
        await rollUp(
          entries.map((e) => ({ gatewayId: e.gatewayId, t0: e.slice.t0, t1: e.slice.t0 + e.slice.n * e.slice.dt })),
          rollupDeltas(entries),
        );
      } catch (err) {
        console.warn('[ingest] rollups deferred to recovery:', err instanceof Error ? err.message : String(err));
        this.forget(new Set(entries.map((e) => e.gatewayId)));
      }
    }
  }

  private async recoverNow(gatewayIds: string[]): Promise<void> {
    const todo = gatewayIds.filter((g) => !this.recovered.has(g));
    if (!todo.length) return;
    for (;;) {
      // A listed row whose raw row is gone (retention took it) leaves its entry only.
      const { rows } = await getDbHandle().pool.query<{ gateway_id: string; t0: number; dt: number | null; n: number | null; keys: string[] | null; counts: Buffer | null; cc: Buffer | null }>(
        `select p.gateway_id, p.t0, c.dt, c.n, c.keys, c.counts, c.cc
           from rollup_pending p left join count_batches c on c.gateway_id = p.gateway_id and c.t0 = p.t0
          where p.gateway_id = any($1::text[])
          order by p.gateway_id, p.t0
          limit $2`,
        [todo, RECOVER_ROWS],
      );
      const stored: Entry[] = [];
      for (const r of rows) {
        if (r.counts === null || r.dt === null || r.n === null || r.keys === null) continue;
        stored.push({ gatewayId: r.gateway_id, slice: sliceOfRow(unpackRow({ t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, counts: r.counts, cc: r.cc })) });
      }
      // Every entry read by its exact key; the sums of those whose rows are still there.
      if (rows.length) await rollUp(rows.map((r) => ({ gatewayId: r.gateway_id, t0: r.t0, t1: r.t0 + 1 })), rollupDeltas(stored));
      if (rows.length < RECOVER_ROWS) break;
    }
    for (const g of todo) this.recovered.add(g);
  }
}
