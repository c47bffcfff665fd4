import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../../../lib/server/http/responses.ts';
import { stopRun } from '../../../../../lib/server/runs.ts';
import { runIdSchema } from '../../../../../lib/runs.ts';

export const POST = endpoint('operator', async (ctx) => {
  const id = parseOr422(runIdSchema, ctx.params['id']);
  return json(await stopRun(id));
});
