import { z } from 'zod';
import { benchIdSchema } from '../../../../../lib/contract/wire.ts';
import { benchStability } from '../../../../../lib/server/analysis/stability.ts';
import { getBench } from '../../../../../lib/server/benches.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, problem } from '../../../../../lib/server/http/responses.ts';
import { timeParam } from '../../../../../lib/server/http/time-params.ts';

const query = z.object({
  from: timeParam,
  to: timeParam,
  // τ₀ in ms; 1 s by default, which the 1 s rollups serve for long ranges.
  step: z.coerce.number().int('step must be whole ms').min(1).max(3_600_000).default(1_000),
});

/** `?from=&to=&step=`: overlapping Allan deviation of each channel's rate and of the phase. */
export const GET = endpoint('observer', async ({ params, url }) => {
  const bench = await getBench(parseOr422(benchIdSchema, params['id']));
  if (!bench) return problem(404, 'no such bench');
  const q = parseOr422(query, Object.fromEntries(url.searchParams));
  return json(await benchStability(bench.id, q.from, q.to, q.step));
});
