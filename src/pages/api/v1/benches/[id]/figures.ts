import { getBench } from '../../../../../lib/server/benches.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, problem } from '../../../../../lib/server/http/responses.ts';
import { runtime } from '../../../../../lib/server/runtime.ts';

/** The bench's latest live figures (rates, corrections, visibility, phase, photon statistics). */
export const GET = endpoint('observer', async ({ params }) => {
  const bench = await getBench(params['id'] ?? '');
  if (!bench) return problem(404, 'no such bench');
  return json({ figures: runtime().analysis?.figures(bench.id) ?? null });
});
