// What a reconnecting client missed: stored batches of the bench's live gateways whose bins end
// after `since`, oldest first, one page at a time. Pages follow a (t0, gateway) cursor, so batches
// of several gateways that start at the same time, or inside the last batch of a page, are neither
// skipped nor sent twice. Imported runs' pseudo-gateways are history, not live: left out.
import { IMPORT_GATEWAY_PREFIX } from '../../import-shapes.ts';
import type { CountsMessage } from '../../live-messages.ts';
import { getDbHandle } from '../db/index.ts';
import { unpackRow } from '../db/packed-counts.ts';
import { countsMessage } from '../ingest/pipeline.ts';

/** Batches per page at most; the hub also cuts a page by bytes (hub.ts). */
const RESUME_PAGE = 200;

export interface ResumeCursor {
  t0: number;
  gateway: string;
}

/**
 * A page after the cursor ($2 t0, $3 gateway) of bench $1: $4 rows, pseudo-gateway prefix $5,
 * bins ending after $6 (the first page's batches straddling `since` sort before the others' older
 * ones, so a page cut among them must not bring those back).
 */
export const NEXT_PAGE_SQL = `select c.gateway_id, c.t0, c.dt, c.n, c.keys, c.counts, c.x, c.cc
           from gateways g
           cross join lateral (
             select * from count_batches c
              where c.gateway_id = g.id and c.t0 >= case when g.id > $3 then $2::int8 else $2::int8 + 1 end and c.t1 > $6
              order by c.t0 limit $4
           ) c
          where g.bench_id = $1 and not starts_with(g.id, $5)
          order by c.t0, c.gateway_id
          limit $4 + 1`;

type Row = { gateway_id: string; t0: number; dt: number; n: number; keys: string[]; counts: Buffer; x: number[] | null; cc: Buffer | null };

/**
 * One page of the batches whose bins end after `since`, in (t0, gateway) order: from the start when
 * `after` is null, else strictly after that cursor. `next` is the cursor of the following page,
 * null on the last one.
 */
export async function countsPage(
  benchId: string,
  since: number,
  after: ResumeCursor | null,
  limit = RESUME_PAGE,
): Promise<{ messages: CountsMessage[]; next: ResumeCursor | null }> {
  const pool = getDbHandle().pool;
  // Per gateway: its batch straddling `since` and those starting after it (two probes of the
  // primary key), or, past the first page, its batches after the cursor; then the first `limit` of
  // all. "After the cursor" is one index range per gateway: from t0 itself for gateways sorting
  // after the cursor's, from the next ms for the others (an OR of the two would scan).
  const { rows } = after
    ? await pool.query<Row>(
        NEXT_PAGE_SQL,
        [benchId, after.t0, after.gateway, limit, IMPORT_GATEWAY_PREFIX, since],
      )
    : await pool.query<Row>(
        `select c.gateway_id, c.t0, c.dt, c.n, c.keys, c.counts, c.x, c.cc
           from gateways g
           cross join lateral (
             (select * from count_batches c where c.gateway_id = g.id and c.t0 <= $2 order by c.t0 desc limit 1)
             union all
             (select * from count_batches c where c.gateway_id = g.id and c.t0 > $2 order by c.t0 limit $3)
           ) c
          where g.bench_id = $1 and not starts_with(g.id, $4) and c.t1 > $2
          order by c.t0, c.gateway_id
          limit $3 + 1`,
        [benchId, since, limit, IMPORT_GATEWAY_PREFIX],
      );
  const page = rows.slice(0, limit);
  const last = page.at(-1);
  const messages = page.map(unpackRow).map((r) => countsMessage(benchId, r.gateway_id, { t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, channels: r.keys.map((_, i) => r.counts.slice(i * r.n, (i + 1) * r.n)), x: r.x, cc: r.cc }));
  return { messages, next: rows.length > limit && last ? { t0: last.t0, gateway: last.gateway_id } : null };
}
