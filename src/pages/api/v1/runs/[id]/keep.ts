import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../lib/server/http/responses.ts';
import { setRunKeep } from '../../../../../lib/server/runs.ts';
import { keepRunSchema, runIdSchema } from '../../../../../lib/runs.ts';

/** Operators mark a run to keep (retention spares it) or release it: `{ "keep": true | false }`. */
export const POST = endpoint('operator', async (ctx) => {
  const id = parseOr422(runIdSchema, ctx.params['id']);
  const { keep } = await readJson(ctx.request, keepRunSchema);
  return json(await setRunKeep(id, keep, ctx.user.id));
});
