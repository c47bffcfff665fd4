// Everything one ingest write changes, as ONE SQL statement of data-modifying CTEs: raw rows,
// rollup sums (merged in memory, added to stored ones with array arithmetic), new channels, health
// counters and last-seen times. One statement is one atomic transaction, so the write costs one
// round trip instead of eight (begin, rows, rollups, channels, health, last seen, commit): on this
// shared 2-core machine a round trip to PostgreSQL takes 1–2 ms of scheduling, which made up most
// of publish → browser latency. Every column travels as one array parameter through unnest, so the
// statement has a fixed 30 parameters however many rows it holds. Pure.
import type { Slice } from './coverage.ts';
import type { HealthDelta } from './health-delta.ts';
import { keyArrayLiteral, numericArrayLiteral } from './pg-arrays.ts';
import type { RollupDelta } from './rollup-math.ts';

export interface StoredSlice {
  gatewayId: string;
  slice: Slice;
  boot: string;
  seq: number;
}

const SQL = `
with stored as (
  insert into count_batches (gateway_id, t0, t1, dt, n, keys, counts, x, cc, boot, seq)
  select u.gw, u.t0, u.t1, u.dt, u.n, u.keys::text[], u.counts::int4[], u.x::float8[], u.cc::int4[], u.boot, u.seq
    from unnest($1::text[], $2::int8[], $3::int8[], $4::int4[], $5::int4[], $6::text[], $7::text[], $8::text[], $9::text[], $10::text[], $11::int8[])
      as u(gw, t0, t1, dt, n, keys, counts, x, cc, boot, seq)
  -- The coverage plan already excludes stored bins; ON CONFLICT stays as the last line of defence.
  on conflict do nothing
), rolled as (
  insert into rollups as r (gateway_id, key, step_ms, block_t0, sums, bins)
  select u.gw, u.key, u.step, u.block_t0, u.sums::int8[], u.bins::int4[]
    from unnest($12::text[], $13::text[], $14::int4[], $15::int8[], $16::text[], $17::text[]) as u(gw, key, step, block_t0, sums, bins)
  on conflict (gateway_id, key, step_ms, block_t0) do update set
    sums = (select array_agg(a + b order by i) from unnest(r.sums, excluded.sums) with ordinality as t(a, b, i)),
    bins = (select array_agg(a + b order by i) from unnest(r.bins, excluded.bins) with ordinality as t(a, b, i))
), channels_added as (
  -- Contract: a bench's channels are created when its gateway first reports them.
  insert into channels (gateway_id, key, bench_id)
  select g.id, u.key, g.bench_id from unnest($18::text[], $19::text[]) as u(gw, key) join gateways g on g.id = u.gw
  on conflict do nothing
), health as (
  insert into gateway_health as h (gateway_id, accepted, duplicates, rejected, refused, seq_gaps, last_rejects, last_boot, last_seq, clock_offset_ms)
  select u.gw, u.accepted, u.duplicates, u.rejected, u.refused, u.seq_gaps, u.rejects::jsonb, u.last_boot, u.last_seq, u.clock_offset_ms
    from unnest($20::text[], $21::int8[], $22::int8[], $23::int8[], $24::int8[], $25::int8[], $26::text[], $27::text[], $28::int8[], $29::float8[])
      as u(gw, accepted, duplicates, rejected, refused, seq_gaps, rejects, last_boot, last_seq, clock_offset_ms)
    join gateways g on g.id = u.gw
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
    clock_offset_ms = coalesce(excluded.clock_offset_ms, h.clock_offset_ms)
), seen as (
  update gateways set last_seen_at = now() where id = any($30::text[])
)
select 1`;

/** The statement and its 30 array parameters. Rollup deltas must be unique per key (one row may change once per statement). */
export function writeStatement(stored: StoredSlice[], deltas: RollupDelta[], newChannels: [string, string][], health: Map<string, HealthDelta>): { text: string; values: unknown[] } {
  const hs = [...health];
  return {
    text: SQL,
    values: [
      stored.map((r) => r.gatewayId),
      stored.map((r) => r.slice.t0),
      stored.map((r) => r.slice.t0 + r.slice.n * r.slice.dt),
      stored.map((r) => r.slice.dt),
      stored.map((r) => r.slice.n),
      stored.map((r) => keyArrayLiteral(r.slice.keys)),
      stored.map((r) => numericArrayLiteral(r.slice.counts)),
      stored.map((r) => numericArrayLiteral(r.slice.x)),
      stored.map((r) => numericArrayLiteral(r.slice.cc)),
      stored.map((r) => r.boot),
      stored.map((r) => r.seq),
      deltas.map((d) => d.gatewayId),
      deltas.map((d) => d.key),
      deltas.map((d) => d.stepMs),
      deltas.map((d) => d.blockT0),
      deltas.map((d) => numericArrayLiteral(d.sums)),
      deltas.map((d) => numericArrayLiteral(d.bins)),
      newChannels.map((c) => c[0]),
      newChannels.map((c) => c[1]),
      hs.map(([g]) => g),
      hs.map(([, h]) => h.accepted),
      hs.map(([, h]) => h.duplicates),
      hs.map(([, h]) => h.rejected),
      hs.map(([, h]) => h.refused),
      hs.map(([, h]) => h.seqGaps),
      hs.map(([, h]) => JSON.stringify(h.rejects)),
      hs.map(([, h]) => h.lastBoot),
      hs.map(([, h]) => h.lastSeq),
      hs.map(([, h]) => h.clockOffsetMs),
      hs.filter(([, h]) => h.accepted + h.duplicates > 0).map(([g]) => g),
    ],
  };
}
