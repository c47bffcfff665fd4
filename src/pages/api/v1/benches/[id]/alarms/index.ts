import { z } from 'zod';
import { benchIdSchema } from '../../../../../../lib/contract/wire.ts';
import { listEvents } from '../../../../../../lib/server/alarms/event-store.ts';
import { endpoint } from '../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../../../../lib/server/http/responses.ts';

const querySchema = z.object({
  open: z.enum(['0', '1', 'true', 'false']).optional(),
  limit: z.coerce.number().int().min(1).max(1000).default(100),
});

/** The bench's alarm events, newest first; `open=1` for those not yet cleared. */
export const GET = endpoint('observer', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const q = parseOr422(querySchema, Object.fromEntries(ctx.url.searchParams));
  return json(await listEvents({ benchIds: [benchId], open: q.open === '1' || q.open === 'true', limit: q.limit }));
});
