import { benchIdSchema, commandBodySchema } from '../../../../../lib/contract/wire.ts';
import { dispatchCommand } from '../../../../../lib/server/commands/dispatch.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../lib/server/http/responses.ts';

/**
 * A command body per the contract, without `v` and `id` → 202 `{ id, gateway, gatewayOnline }` (the
 * contract's `{ id }` and two added fields: with `gatewayOnline: false` no ack will come); 422
 * outside the bench's drive limits or for a sweep that cannot be run.
 */
export const POST = endpoint('operator', async ({ params, request, user }) => {
  const benchId = parseOr422(benchIdSchema, params['id']);
  const body = await readJson(request, commandBodySchema);
  return json(await dispatchCommand(benchId, body, user.id), 202);
});
