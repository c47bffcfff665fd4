import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { HttpError, json, parseOr422 } from '../../../../../lib/server/http/responses.ts';
import { getRun } from '../../../../../lib/server/runs.ts';
import { runIdSchema } from '../../../../../lib/runs.ts';

export const GET = endpoint('observer', async (ctx) => {
  const id = parseOr422(runIdSchema, ctx.params['id']);
  const run = await getRun(id);
  if (!run) throw new HttpError(404, `no run ${id}`);
  return json(run);
});
