// What a reconnecting client missed: stored batches of the bench's gateways whose bins end after
// `since`, oldest first, capped so one resume cannot make a huge answer (the client asks again
// from where the capped answer ended).
import type { CountsMessage } from '../../live-messages.ts';
import { getDbHandle } from '../db/index.ts';
import { unpackRow } from '../db/packed-counts.ts';
import { countsMessage } from '../ingest/pipeline.ts';

/** At most this many batches per resume (about 3 minutes of a 10-batches/s gateway). */
export const RESUME_MAX_BATCHES = 2_000;

export async function countsSince(benchId: string, since: number, limit = RESUME_MAX_BATCHES): Promise<{ messages: CountsMessage[]; complete: boolean }> {
  const { rows } = await getDbHandle().pool.query<{
    gateway_id: string; t0: number; dt: number; n: number; keys: string[]; counts: Buffer; x: number[] | null; cc: Buffer | null;
  }>(
    `select c.gateway_id, c.t0, c.dt, c.n, c.keys, c.counts, c.x, c.cc
       from gateways g
       cross join lateral (
         (select * from count_batches c where c.gateway_id = g.id and c.t0 <= $2 order by c.t0 desc limit 1)
         union all
         (select * from count_batches c where c.gateway_id = g.id and c.t0 > $2 order by c.t0 limit $3)
       ) c
      where g.bench_id = $1 and c.t1 > $2
      order by c.t0, c.gateway_id
      limit $3 + 1`,
    [benchId, since, limit],
  );
  const complete = rows.length <= limit;
  const messages = rows.slice(0, limit).map(unpackRow).map((r) => countsMessage(benchId, r.gateway_id, { t0: r.t0, dt: r.dt, n: r.n, keys: r.keys, counts: r.counts, x: r.x, cc: r.cc }));
  return { messages, complete };
}
