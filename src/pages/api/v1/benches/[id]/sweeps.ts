import { z } from 'zod';
import { benchIdSchema } from '../../../../../lib/contract/wire.ts';
import { MAX_SWEEPS, sweepView, sweepsBetween } from '../../../../../lib/server/analysis/sweeps-store.ts';
import { getBench } from '../../../../../lib/server/benches.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, problem } from '../../../../../lib/server/http/responses.ts';
import { timeParam } from '../../../../../lib/server/http/time-params.ts';

const query = z.object({
  from: timeParam.optional(),
  to: timeParam.optional(),
  // Most sweeps in the answer; a longer range is thinned evenly (header X-Sweeps-Thinned-By).
  max: z.coerce.number().int().min(1).max(20_000).default(MAX_SWEEPS),
  // `live`: only the passes of the bench's own gateways, none of its imported recordings' (the live page's trend).
  source: z.enum(['all', 'live']).default('all'),
});

const DAY_MS = 86_400_000;

export const GET = endpoint('observer', async ({ params, url }) => {
  const bench = await getBench(parseOr422(benchIdSchema, params['id']));
  if (!bench) return problem(404, 'no such bench');
  const q = parseOr422(query, Object.fromEntries(url.searchParams));
  const to = q.to ?? Date.now();
  const from = q.from ?? to - DAY_MS;
  if (from > to) return problem(422, 'from is after to');
  const { rows, thinnedBy } = await sweepsBetween(bench.id, from, to, q.max, undefined, q.source);
  return json(rows.map(sweepView), 200, { 'x-sweeps-thinned-by': String(thinnedBy) });
});
