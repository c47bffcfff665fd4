// The store stage: a batched writer. Batches wait while a write is in flight and go together in
// the next one (group commit), so a quiet gateway's batch is written at once (low latency) and a
// busy broker's batches share one transaction and multi-row statements (throughput). Each write
// stores the raw rows, their rollups, new channels and the health counters in ONE transaction, and
// a batch's promise resolves only after COMMIT: the broker PUBACKs after that, so a crash loses
// nothing the gateway was told is safe.
import type pg from 'pg';
import type { CountBatch } from '../../contract/wire.ts';
import { getDbHandle } from '../db/index.ts';
import { batchSpan, planBatch, type Slice, type StoredSpan } from './coverage.ts';
import { withDbRetry } from './db-retry.ts';
import { emptyDelta, noteReject, seqAdvance, type HealthDelta } from './health-delta.ts';
import { rollupDeltas } from './rollup-math.ts';

export type BatchOutcome = { kind: 'stored'; slices: Slice[] } | { kind: 'duplicate' } | { kind: 'rejected'; reason: string };

type Item =
  | { kind: 'batch'; gatewayId: string; batch: CountBatch; arrivedAt: number; resolve: (o: BatchOutcome) => void }
  | { kind: 'reject' | 'refused'; gatewayId: string; reason: string; at: number; resolve: () => void };

/** Most batches in one transaction: bounds statement size (12 parameters a row, PostgreSQL allows 65,535). */
const MAX_ITEMS_PER_WRITE = 1_000;
const ROWS_PER_STATEMENT = 400;

export interface StoredEvent {
  gatewayId: string;
  slices: Slice[];
}

export class BatchWriter {
  private queue: Item[] = [];
  private writing = false;
  /** Last boot/seq per gateway, loaded from gateway_health on first sight; only this writer changes them. */
  private seqState = new Map<string, { boot: string | null; seq: number | null }>();
  private knownChannels = new Set<string>();
  private idle: (() => void)[] = [];

  constructor(private readonly onStored: (e: StoredEvent) => void) {}

  /** Stores a validated batch; resolves after COMMIT with what happened. Never rejects. */
  submit(gatewayId: string, batch: CountBatch, arrivedAt = Date.now()): Promise<BatchOutcome> {
    return new Promise((resolve) => this.enqueue({ kind: 'batch', gatewayId, batch, arrivedAt, resolve }));
  }

  /** Counts a payload that broke the contract (gateway_health.rejected, reason kept). */
  reject(gatewayId: string, reason: string): Promise<void> {
    return new Promise((resolve) => this.enqueue({ kind: 'reject', gatewayId, reason, at: Date.now(), resolve }));
  }

  /** Counts a publish or subscribe the broker refused (gateway_health.refused). */
  refused(gatewayId: string, reason: string): Promise<void> {
    return new Promise((resolve) => this.enqueue({ kind: 'refused', gatewayId, reason, at: Date.now(), resolve }));
  }

  /** Resolves when everything submitted so far is written. */
  flushed(): Promise<void> {
    if (!this.writing && this.queue.length === 0) return Promise.resolve();
    return new Promise((resolve) => this.idle.push(resolve));
  }

  private enqueue(item: Item): void {
    this.queue.push(item);
    if (!this.writing) {
      this.writing = true;
      // One macrotask of grace gathers every packet parsed from the same socket reads.
      setImmediate(() => void this.drain());
    }
  }

  private async drain(): Promise<void> {
    while (this.queue.length) {
      const items = this.queue.splice(0, MAX_ITEMS_PER_WRITE);
      await this.writeIsolating(items);
    }
    this.writing = false;
    for (const resolve of this.idle.splice(0)) resolve();
  }

  /** Writes a group; if it fails for a non-transient reason, writes its items one by one so one bad item cannot hold back the rest. */
  private async writeIsolating(items: Item[]): Promise<void> {
    try {
      await withDbRetry('store', () => this.write(items));
    } catch (err) {
      if (items.length > 1) {
        for (const item of items) await this.writeIsolating([item]);
        return;
      }
      const item = items[0]!;
      const reason = `could not be stored: ${err instanceof Error ? err.message : String(err)}`.slice(0, 300);
      console.error(`[ingest] ${item.gatewayId}: ${reason}`);
      if (item.kind === 'batch') item.resolve({ kind: 'rejected', reason });
      else item.resolve();
    }
  }

  private async write(items: Item[]): Promise<void> {
    const client = await getDbHandle().pool.connect();
    // A server shutdown mid-transaction also emits 'error' on the client; unhandled, it would end the process.
    const onError = (err: Error) => console.warn('[ingest] database connection lost:', err.message);
    client.on('error', onError);
    let broken = false;
    try {
      await client.query('begin');
      const result = await this.writeInTransaction(client, items);
      await client.query('commit');
      this.afterCommit(items, result);
    } catch (err) {
      broken = true;
      await client.query('rollback').catch(() => undefined);
      throw err;
    } finally {
      client.off('error', onError);
      // A client that failed mid-transaction may hold a dead socket: discard it instead of pooling it.
      client.release(broken);
    }
  }

  private async writeInTransaction(client: pg.PoolClient, items: Item[]) {
    const batches = items.filter((i): i is Extract<Item, { kind: 'batch' }> => i.kind === 'batch');
    const gatewayIds = [...new Set(items.map((i) => i.gatewayId))];
    const seq = await this.loadSeqState(client, gatewayIds);
    const spans = await this.overlappingSpans(client, batches);

    const health = new Map<string, HealthDelta>(gatewayIds.map((g) => [g, emptyDelta()]));
    const outcomes = new Map<Item, BatchOutcome>();
    const stored: { gatewayId: string; slice: Slice; boot: string; seq: number }[] = [];
    for (const item of items) {
      const h = health.get(item.gatewayId)!;
      if (item.kind !== 'batch') {
        if (item.kind === 'reject') h.rejected++;
        else h.refused++;
        noteReject(h, item.kind === 'refused' ? `refused: ${item.reason}` : item.reason, item.at);
        continue;
      }
      const existing = spans.get(item) ?? [];
      const plan = planBatch(item.batch, existing);
      outcomes.set(item, plan.kind === 'store' ? { kind: 'stored', slices: plan.slices } : plan);
      // The batch arrived, whatever becomes of it: its seq closes no gap and opens none.
      h.seqGaps += seqAdvance(seq.get(item.gatewayId)!, item.batch.boot, item.batch.seq);
      if (plan.kind === 'rejected') {
        h.rejected++;
        noteReject(h, plan.reason, item.arrivedAt);
        continue;
      }
      if (plan.kind === 'duplicate') {
        h.duplicates++;
        continue;
      }
      h.accepted++;
      const offset = item.arrivedAt - batchSpan(item.batch).t1;
      h.clockOffsetMs = h.clockOffsetMs === null ? offset : Math.min(h.clockOffsetMs, offset);
      for (const slice of plan.slices) {
        stored.push({ gatewayId: item.gatewayId, slice, boot: item.batch.boot, seq: item.batch.seq });
        // Later batches of the same write must see this one as stored (a re-chunked replay in one burst).
        for (const other of batches) {
          if (other.gatewayId === item.gatewayId && other !== item) {
            const list = spans.get(other) ?? [];
            list.push({ t0: slice.t0, t1: slice.t0 + slice.n * slice.dt, dt: slice.dt, keys: slice.keys });
            spans.set(other, list);
          }
        }
      }
    }
    for (const [g, h] of health) {
      const s = seq.get(g)!;
      h.lastBoot = s.boot;
      h.lastSeq = s.seq;
    }

    await this.insertRows(client, stored);
    await this.upsertRollups(client, stored);
    const newChannels = await this.insertChannels(client, stored);
    await this.applyHealth(client, health);
    return { outcomes, newChannels, seq };
  }

  private afterCommit(items: Item[], result: Awaited<ReturnType<BatchWriter['writeInTransaction']>>): void {
    for (const c of result.newChannels) this.knownChannels.add(c);
    for (const [g, s] of result.seq) this.seqState.set(g, s);
    for (const item of items) {
      if (item.kind !== 'batch') {
        item.resolve();
        continue;
      }
      const outcome = result.outcomes.get(item)!;
      if (outcome.kind === 'stored') {
        try {
          this.onStored({ gatewayId: item.gatewayId, slices: outcome.slices });
        } catch (err) {
          console.error('[ingest] fan-out failed:', err);
        }
      }
      item.resolve(outcome);
    }
  }

  private async loadSeqState(client: pg.PoolClient, gatewayIds: string[]) {
    const missing = gatewayIds.filter((g) => !this.seqState.has(g));
    if (missing.length) {
      const { rows } = await client.query<{ gateway_id: string; last_boot: string | null; last_seq: number | null }>(
        'select gateway_id, last_boot, last_seq from gateway_health where gateway_id = any($1::text[])',
        [missing],
      );
      for (const g of missing) {
        const r = rows.find((row) => row.gateway_id === g);
        this.seqState.set(g, { boot: r?.last_boot ?? null, seq: r?.last_seq ?? null });
      }
    }
    // Work on copies: if the transaction rolls back, the cached state must stay as it was.
    return new Map(gatewayIds.map((g) => [g, { ...this.seqState.get(g)! }]));
  }

  /**
   * Stored spans each batch touches. Stored spans of a gateway never overlap, so they are the last
   * one starting at or before the batch start plus those starting inside it: two index probes on
   * the primary key (gateway_id, t0) per batch, whatever the table size.
   */
  private async overlappingSpans(client: pg.PoolClient, batches: Extract<Item, { kind: 'batch' }>[]) {
    const out = new Map<Item, StoredSpan[]>();
    if (!batches.length) return out;
    const spans = batches.map((b) => batchSpan(b.batch));
    const { rows } = await client.query<{ i: number; t0: number; t1: number; dt: number; keys: string[] }>(
      `select q.i::int as i, b.t0, b.t1, b.dt, b.keys
         from unnest($1::text[], $2::int8[], $3::int8[]) with ordinality as q(gw, t0, t1, i)
         cross join lateral (
           (select c.t0, c.t1, c.dt, c.keys from count_batches c where c.gateway_id = q.gw and c.t0 <= q.t0 order by c.t0 desc limit 1)
           union all
           (select c.t0, c.t1, c.dt, c.keys from count_batches c where c.gateway_id = q.gw and c.t0 > q.t0 and c.t0 < q.t1)
         ) b
        where b.t1 > q.t0`,
      [batches.map((b) => b.gatewayId), spans.map((s) => s.t0), spans.map((s) => s.t1)],
    );
    for (const r of rows) {
      const item = batches[r.i - 1]!;
      const list = out.get(item) ?? [];
      list.push({ t0: r.t0, t1: r.t1, dt: r.dt, keys: r.keys });
      out.set(item, list);
    }
    return out;
  }

  private async insertRows(client: pg.PoolClient, stored: { gatewayId: string; slice: Slice; boot: string; seq: number }[]) {
    for (let at = 0; at < stored.length; at += ROWS_PER_STATEMENT) {
      const chunk = stored.slice(at, at + ROWS_PER_STATEMENT);
      const params: unknown[] = [];
      const values = chunk.map(({ gatewayId, slice: s, boot, seq }) => {
        const p = params.length;
        params.push(gatewayId, s.t0, s.t0 + s.n * s.dt, s.dt, s.n, s.keys, s.counts, s.x, s.cc, boot, seq);
        return `($${p + 1}, $${p + 2}, $${p + 3}, $${p + 4}, $${p + 5}, $${p + 6}::text[], $${p + 7}::int4[], $${p + 8}::float8[], $${p + 9}::int4[], $${p + 10}, $${p + 11})`;
      });
      // The coverage plan already excludes stored bins; ON CONFLICT stays as the last line of defence.
      await client.query(
        `insert into count_batches (gateway_id, t0, t1, dt, n, keys, counts, x, cc, boot, seq) values ${values.join(', ')} on conflict do nothing`,
        params,
      );
    }
  }

  private async upsertRollups(client: pg.PoolClient, stored: { gatewayId: string; slice: Slice }[]) {
    const deltas = rollupDeltas(stored);
    for (let at = 0; at < deltas.length; at += ROWS_PER_STATEMENT) {
      const chunk = deltas.slice(at, at + ROWS_PER_STATEMENT);
      const params: unknown[] = [];
      const values = chunk.map((d) => {
        const p = params.length;
        params.push(d.gatewayId, d.key, d.stepMs, d.blockT0, d.sums, d.bins);
        return `($${p + 1}, $${p + 2}, $${p + 3}, $${p + 4}, $${p + 5}::int8[], $${p + 6}::int4[])`;
      });
      await client.query(
        `insert into rollups as r (gateway_id, key, step_ms, block_t0, sums, bins) values ${values.join(', ')}
         on conflict (gateway_id, key, step_ms, block_t0) do update set
           sums = (select array_agg(a + b order by i) from unnest(r.sums, excluded.sums) with ordinality as t(a, b, i)),
           bins = (select array_agg(a + b order by i) from unnest(r.bins, excluded.bins) with ordinality as t(a, b, i))`,
        params,
      );
    }
  }

  /** Contract: a bench's channels are created when its gateway first reports them. */
  private async insertChannels(client: pg.PoolClient, stored: { gatewayId: string; slice: Slice }[]): Promise<string[]> {
    const fresh = new Set<string>();
    for (const { gatewayId, slice } of stored) for (const k of slice.keys) if (!this.knownChannels.has(`${gatewayId}/${k}`)) fresh.add(`${gatewayId}/${k}`);
    if (!fresh.size) return [];
    const pairs = [...fresh].map((c) => c.split('/') as [string, string]);
    await client.query(
      `insert into channels (gateway_id, key, bench_id)
       select g.id, u.key, g.bench_id from unnest($1::text[], $2::text[]) as u(gw, key) join gateways g on g.id = u.gw
       on conflict do nothing`,
      [pairs.map((p) => p[0]), pairs.map((p) => p[1])],
    );
    return [...fresh];
  }

  private async applyHealth(client: pg.PoolClient, health: Map<string, HealthDelta>) {
    const params: unknown[] = [];
    const values = [...health].map(([g, h]) => {
      const p = params.length;
      params.push(g, h.accepted, h.duplicates, h.rejected, h.refused, h.seqGaps, JSON.stringify(h.rejects), h.lastBoot, h.lastSeq, h.clockOffsetMs);
      return `($${p + 1}, $${p + 2}::int8, $${p + 3}::int8, $${p + 4}::int8, $${p + 5}::int8, $${p + 6}::int8, $${p + 7}::jsonb, $${p + 8}, $${p + 9}::int8, $${p + 10}::float8)`;
    });
    if (!values.length) return;
    await client.query(
      `insert into gateway_health as h (gateway_id, accepted, duplicates, rejected, refused, seq_gaps, last_rejects, last_boot, last_seq, clock_offset_ms)
       select v.* from (values ${values.join(', ')}) as v(gateway_id, accepted, duplicates, rejected, refused, seq_gaps, last_rejects, last_boot, last_seq, clock_offset_ms)
       join gateways g on g.id = v.gateway_id
       on conflict (gateway_id) do update set
         accepted = h.accepted + excluded.accepted,
         duplicates = h.duplicates + excluded.duplicates,
         rejected = h.rejected + excluded.rejected,
         refused = h.refused + excluded.refused,
         seq_gaps = h.seq_gaps + excluded.seq_gaps,
         last_rejects = case when jsonb_array_length(excluded.last_rejects) = 0 then h.last_rejects else
           (select coalesce(jsonb_agg(e order by i), '[]'::jsonb) from jsonb_array_elements(excluded.last_rejects || h.last_rejects) with ordinality as t(e, i) where i <= 20) end,
         last_boot = coalesce(excluded.last_boot, h.last_boot),
         last_seq = coalesce(excluded.last_seq, h.last_seq),
         clock_offset_ms = coalesce(excluded.clock_offset_ms, h.clock_offset_ms)`,
      params,
    );
    const seen = [...health].filter(([, h]) => h.accepted + h.duplicates > 0).map(([g]) => g);
    if (seen.length) await client.query('update gateways set last_seen_at = now() where id = any($1::text[])', [seen]);
  }
}
