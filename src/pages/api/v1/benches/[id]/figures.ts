import { benchIdSchema } from '../../../../../lib/contract/wire.ts';
import { getBench } from '../../../../../lib/server/benches.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, problem } from '../../../../../lib/server/http/responses.ts';
import { runtime } from '../../../../../lib/server/runtime.ts';

/** The bench's latest live figures (rates, corrections, visibility, phase, photon statistics). */
export const GET = endpoint('observer', async ({ params }) => {
  const bench = await getBench(parseOr422(benchIdSchema, params['id']));
  if (!bench) return problem(404, 'no such bench');
  return json({ figures: runtime().analysis?.figures(bench.id) ?? null });
});
