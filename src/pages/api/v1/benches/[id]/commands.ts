import { benchIdSchema, commandBodySchema } from '../../../../../lib/contract/wire.ts';
import { dispatchCommand } from '../../../../../lib/server/commands/dispatch.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../lib/server/http/responses.ts';

/** A command body per the contract, without `v` and `id` → 202 `{ id }`; 422 outside the bench's drive limits. */
export const POST = endpoint('operator', async ({ params, request, user }) => {
  const benchId = parseOr422(benchIdSchema, params['id']);
  const body = await readJson(request, commandBodySchema);
  const { id } = await dispatchCommand(benchId, body, user.id);
  return json({ id }, 202);
});
