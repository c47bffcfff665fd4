import { z } from 'zod';
import { benchIdSchema } from '../../../../../lib/contract/wire.ts';
import { getBench } from '../../../../../lib/server/benches.ts';
import { queryCounts } from '../../../../../lib/server/counts-query.ts';
import { countsCsv } from '../../../../../lib/server/counts-query-csv.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, problem } from '../../../../../lib/server/http/responses.ts';
import { timeParam } from '../../../../../lib/server/http/time-params.ts';

const query = z.object({
  from: timeParam,
  to: timeParam,
  // ms; one day at most per bucket. Defaults to 1 s when left out.
  step: z.coerce.number().int('step must be whole ms').min(1).max(86_400_000).default(1_000),
  format: z.enum(['json', 'csv']).optional(),
});

/**
 * `?from=&to=&step=` (ms or ISO 8601; step in ms): binned counts, JSON or CSV (`format=csv` or `Accept: text/csv`).
 * JSON adds to the contract's fields `resolution` and `coveredMs`: per gateway, the ms of each bucket
 * its stored bins cover (`{ "<gateway>": [ms, …] }`, 0 where none), since a bucket only partly
 * recorded (a restart, a recording's ends) sums fewer counts without the light being dimmer; rate
 * = sum · 1000 / coveredMs of the channel's gateway. The CSV stays the contract's and carries no coverage.
 */
export const GET = endpoint('observer', async ({ params, url, request }) => {
  const bench = await getBench(parseOr422(benchIdSchema, params['id']));
  if (!bench) return problem(404, 'no such bench');
  const q = parseOr422(query, Object.fromEntries(url.searchParams));
  const result = await queryCounts(bench.id, q.from, q.to, q.step);
  const csv = q.format === 'csv' || (!q.format && (request.headers.get('accept') ?? '').includes('text/csv'));
  if (csv) return new Response(await countsCsv(bench, q.from, q.to, result), { headers: { 'content-type': 'text/csv; charset=utf-8', 'cache-control': 'no-store' } });
  const { channelInfo: _info, binMs: _widths, ...body } = result;
  return json(body);
});
