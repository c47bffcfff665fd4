// Raw rows of several gateways that reach into a time range, in one statement.
import { getDbHandle } from './index.ts';

/** A `count_batches` row as read, its arrays still packed (packed-counts.ts `unpackRow`). */
export interface RawRow {
  gateway_id: string;
  t0: number;
  dt: number;
  n: number;
  keys: string[];
  counts: Buffer;
  x: number[] | null;
  cc: Buffer | null;
  boot: string;
  seq: number;
}

/**
 * Every row of these gateways with a bin in [from, to), ordered by gateway and start. Stored spans
 * of a gateway never overlap, so they are the last row starting at or before `from` plus those
 * starting inside: two index ranges on the primary key per gateway, whatever the table's size.
 */
export async function rawRowsIn(gatewayIds: string[], from: number, to: number): Promise<RawRow[]> {
  if (!gatewayIds.length) return [];
  const { rows } = await getDbHandle().pool.query<RawRow>(
    `select c.gateway_id, c.t0, c.dt, c.n, c.keys, c.counts, c.x, c.cc, c.boot, c.seq
       from unnest($1::text[]) as g(id)
       cross join lateral (
         (select * from count_batches c where c.gateway_id = g.id and c.t0 <= $2 order by c.t0 desc limit 1)
         union all
         (select * from count_batches c where c.gateway_id = g.id and c.t0 > $2 and c.t0 < $3)
       ) c
      where c.t1 > $2
      order by c.gateway_id, c.t0`,
    [gatewayIds, from, to],
  );
  return rows;
}
