import { gatewayIdSchema } from '../../../../../lib/contract/wire.ts';
import { loadGatewayHealth } from '../../../../../lib/server/gateway-health.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, problem } from '../../../../../lib/server/http/responses.ts';

export const GET = endpoint('observer', async ({ params }) => {
  const health = await loadGatewayHealth(parseOr422(gatewayIdSchema, params['gw']));
  return health ? json(health) : problem(404, 'no such gateway');
});
