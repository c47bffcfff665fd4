import { z } from 'zod';
import { benchIdSchema } from '../../../../lib/contract/wire.ts';
import { endpoint } from '../../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../../lib/server/http/responses.ts';
import { readableBenchIds } from '../../../../lib/server/live/access.ts';
import { loadOverview } from '../../../../lib/server/overview.ts';

/** Benches asked for at once at most: as many as a status socket may name. */
const MAX_BENCHES = 100;

const query = z.object({ bench: z.array(benchIdSchema).min(1, 'name at least one bench').max(MAX_BENCHES, `at most ${MAX_BENCHES} benches`) });

/**
 * `?bench=a&bench=b`: those benches as the lab overview's render lists them, `{ benches: [...] }`,
 * leaving out any the caller may not read or that does not exist. The overview asks it for a bench
 * its 5 s read names and its cards do not (made after the page loaded), so it shows without a reload.
 */
export const GET = endpoint('observer', async ({ url, user }) => {
  const q = parseOr422(query, { bench: url.searchParams.getAll('bench') });
  const readable = new Set(await readableBenchIds(user));
  return json({ benches: await loadOverview(q.bench.filter((b) => readable.has(b))) });
});
