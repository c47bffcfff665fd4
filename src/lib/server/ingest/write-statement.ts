// Everything one ingest write changes, as ONE SQL statement of data-modifying CTEs: raw rows,
// their rollups or their rollup journal entries, new channels, health counters and last-seen
// times. One statement is one atomic transaction, so the write costs one round trip instead of
// eight (begin, rows, rollups, channels, health, last seen, commit): on this shared 2-core machine
// a round trip to PostgreSQL takes 1–2 ms of scheduling, which made up most of publish → browser
// latency. Live ingest leaves the rollups to the journal (rollup-journal.ts), off that path; an
// import or the demo past adds them here. Every column travels as one array parameter through
// unnest, except the count arrays: those of every row travel packed in ONE binary bytea parameter
// that PostgreSQL only slices (no per-element parsing, which at saturation was most of what the
// server and the database spent per bin). A gateway's contiguous slices of one write go as one row
// (row-merge.ts). The per-row and per-block columns travel as array literals built here
// (pg-arrays.ts). A fixed 34 parameters however many rows. Pure.
import type { Slice } from './coverage.ts';
import type { HealthDelta } from './health-delta.ts';
import { countWidth, packedLength, writePacked, writePackedAll, type CountWidth } from '../db/packed-counts.ts';
import { keyArrayLiteral, numericArrayLiteral, textArrayLiteral } from './pg-arrays.ts';
import { mergeContiguous, type Row } from './row-merge.ts';
import type { RollupDelta } from './rollup-math.ts';
import { rollupUpsertSql, rollupUpsertValues } from './rollup-upsert.ts';

export interface StoredSlice {
  gatewayId: string;
  slice: Slice;
  boot: string;
  seq: number;
}

const SQL = `
with stored as (
  insert into count_batches (gateway_id, t0, t1, dt, n, keys, counts, x, cc, boot, seq)
  select u.gw, u.t0, u.t1, u.dt, u.n, u.keys::text[], substring($7::bytea from u.c_at for u.c_len), u.x::float8[],
         case when u.cc_len > 0 then substring($7::bytea from u.cc_at for u.cc_len) end, u.boot, u.seq
    from unnest($1::text[], $2::int8[], $3::int8[], $4::int4[], $5::int4[], $6::text[], $8::int4[], $9::int4[], $10::text[], $11::int4[], $12::int4[], $13::text[], $14::int8[])
      as u(gw, t0, t1, dt, n, keys, c_at, c_len, x, cc_at, cc_len, boot, seq)
  -- The coverage plan already excludes stored bins; ON CONFLICT stays as the last line of defence.
  on conflict do nothing
  returning gateway_id, t0
), pending as (
  insert into rollup_pending (gateway_id, t0) select gateway_id, t0 from stored where $34::bool
), rolled as (
  ${rollupUpsertSql(15)}
), channels_added as (
  -- Contract: a bench's channels are created when its gateway first reports them.
  insert into channels (gateway_id, key, bench_id)
  select g.id, u.key, g.bench_id from unnest($21::text[], $22::text[]) as u(gw, key) join gateways g on g.id = u.gw
  on conflict do nothing
), health as (
  insert into gateway_health as h (gateway_id, accepted, duplicates, rejected, refused, seq_gaps, last_rejects, last_boot, last_seq, clock_offset_ms)
  select u.gw, u.accepted, u.duplicates, u.rejected, u.refused, u.seq_gaps, u.rejects::jsonb, u.last_boot, u.last_seq, u.clock_offset_ms
    from unnest($23::text[], $24::int8[], $25::int8[], $26::int8[], $27::int8[], $28::int8[], $29::text[], $30::text[], $31::int8[], $32::float8[])
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
  update gateways set last_seen_at = now() where id = any($33::text[])
)
-- The rows actually inserted: only those are listed in the rollup journal.
select gateway_id, t0 from stored`;

/**
 * Every row's counts (and coincidences) packed one after the other in one buffer, with each
 * array's 1-based start and length in it (length 0: no coincidences). A row's counts are packed
 * straight from its parts, channel by channel.
 */
function packRows(rows: Row[]) {
  const packs = rows.map((r) => {
    let width: CountWidth = 1;
    for (const p of r.parts) for (const c of p.channels) width = Math.max(width, countWidth(c)) as CountWidth;
    // Channel-major: channel k of every part in turn, then channel k + 1.
    const arrays = r.keys.flatMap((_, k) => r.parts.map((p) => p.channels[k]!));
    return { width, arrays, ccWidth: r.cc ? countWidth(r.cc) : null };
  });
  let size = 0;
  rows.forEach((r, i) => {
    const { width, ccWidth } = packs[i]!;
    size += packedLength(r.keys.length * r.n, width) + (r.cc && ccWidth ? packedLength(r.cc.length, ccWidth) : 0);
  });
  const blob = Buffer.allocUnsafe(size);
  const at = { counts: [] as number[], countsLen: [] as number[], cc: [] as number[], ccLen: [] as number[] };
  let offset = 0;
  rows.forEach((r, i) => {
    const { width, arrays, ccWidth } = packs[i]!;
    const next = writePackedAll(arrays, width, blob, offset);
    at.counts.push(offset + 1);
    at.countsLen.push(next - offset);
    offset = next;
    if (r.cc && ccWidth) {
      const after = writePacked(r.cc, ccWidth, blob, offset);
      at.cc.push(offset + 1);
      at.ccLen.push(after - offset);
      offset = after;
    } else {
      at.cc.push(0);
      at.ccLen.push(0);
    }
  });
  return { blob, at };
}

/**
 * The statement, its 34 parameters and the rows it inserts (it answers with the keys of those
 * inserted, every one unless a row was stored meanwhile). `rollups` are the deltas to add (unique per key: one row may
 * change once per statement), or 'journal' to list each stored row in rollup_pending instead.
 */
export function writeStatement(stored: StoredSlice[], rollups: RollupDelta[] | 'journal', newChannels: [string, string][], health: Map<string, HealthDelta>): { text: string; values: unknown[]; rows: Row[] } {
  const hs = [...health];
  const rows = mergeContiguous(stored);
  const { blob, at } = packRows(rows);
  const numbers = (pick: (r: Row) => number) => numericArrayLiteral(rows.map(pick));
  const deltas = rollups === 'journal' ? [] : rollups;
  return {
    rows,
    text: SQL,
    values: [
      textArrayLiteral(rows.map((r) => r.gatewayId)),
      numbers((r) => r.t0),
      numbers((r) => r.t0 + r.n * r.dt),
      numbers((r) => r.dt),
      numbers((r) => r.n),
      textArrayLiteral(rows.map((r) => keyArrayLiteral(r.keys))),
      blob,
      numericArrayLiteral(at.counts),
      numericArrayLiteral(at.countsLen),
      textArrayLiteral(rows.map((r) => numericArrayLiteral(r.x))),
      numericArrayLiteral(at.cc),
      numericArrayLiteral(at.ccLen),
      textArrayLiteral(rows.map((r) => r.boot)),
      numbers((r) => r.seq),
      ...rollupUpsertValues(deltas),
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
      rollups === 'journal',
    ],
  };
}
