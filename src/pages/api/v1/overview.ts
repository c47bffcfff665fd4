import { z } from 'zod';
import { listEvents } from '../../../lib/server/alarms/event-store.ts';
import { queryRollupCountsOf } from '../../../lib/server/counts-query.ts';
import { endpoint } from '../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../lib/server/http/responses.ts';
import { timeParam } from '../../../lib/server/http/time-params.ts';
import { readableBenchIds } from '../../../lib/server/live/access.ts';

/** Most buckets per bench: the answer holds every bench's, so it stays a summary (a day at 1 min). */
const MAX_POINTS_PER_BENCH = 1440;
/** Open alarms in one answer at most, over all benches (the listing's own bound). */
const MAX_OPEN_ALARMS = 1000;

const query = z
  .object({
    from: timeParam,
    to: timeParam,
    // A multiple of a second: the answer is read from the rollups, once for every bench.
    step: z.coerce.number().int('step must be whole ms').min(1000).max(86_400_000).multipleOf(1000, 'step must be a multiple of 1000 ms'),
  })
  .refine((q) => Math.ceil((q.to - Math.floor(q.from / q.step) * q.step) / q.step) <= MAX_POINTS_PER_BENCH, `at most ${MAX_POINTS_PER_BENCH} steps per bench: use a larger step or a shorter span`);

/**
 * `?from=&to=&step=`: what the lab overview re-reads, for every bench the caller may read, in one
 * answer: `{ benches: [{ id, counts, openAlarms }] }`, `counts` as `GET …/benches/{id}/counts`
 * answers it in JSON (with `resolution` and `coveredMs`), `openAlarms` as `…/alarms?open=1`.
 */
export const GET = endpoint('observer', async ({ url, user }) => {
  const q = parseOr422(query, Object.fromEntries(url.searchParams));
  const ids = await readableBenchIds(user);
  const [counts, alarms] = await Promise.all([queryRollupCountsOf(ids, q.from, q.to, q.step), ids.length ? listEvents({ benchIds: ids, open: true, limit: MAX_OPEN_ALARMS }) : []]);
  return json({
    benches: ids.map((id) => {
      const { channelInfo: _info, binMs: _widths, ...c } = counts.get(id)!;
      return { id, counts: c, openAlarms: alarms.filter((e) => e.benchId === id) };
    }),
  });
});
