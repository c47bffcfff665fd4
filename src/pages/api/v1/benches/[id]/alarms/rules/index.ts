import { benchIdSchema } from '../../../../../../../lib/contract/wire.ts';
import { createRule, listRules, ruleInputSchema, ruleView } from '../../../../../../../lib/server/alarms/rules.ts';
import { endpoint } from '../../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../../../lib/server/http/responses.ts';

export const GET = endpoint('observer', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  return json((await listRules(benchId)).map(ruleView));
});

export const POST = endpoint('admin', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const input = await readJson(ctx.request, ruleInputSchema);
  return json(ruleView(await createRule(benchId, input, ctx.user.id)), 201);
});
