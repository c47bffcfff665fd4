import { recordIdSchema } from '../../../../../../../lib/record-id.ts';
import { benchIdSchema } from '../../../../../../../lib/contract/wire.ts';
import { deleteRule, ruleInputSchema, ruleView, updateRule } from '../../../../../../../lib/server/alarms/rules.ts';
import { endpoint } from '../../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../../../lib/server/http/responses.ts';

const ruleIdSchema = recordIdSchema;

/** Replaces the rule (the full rule body, as for POST). */
export const PUT = endpoint('admin', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const ruleId = parseOr422(ruleIdSchema, ctx.params['ruleId']);
  const input = await readJson(ctx.request, ruleInputSchema);
  return json(ruleView(await updateRule(benchId, ruleId, input, ctx.user.id)));
});

export const DELETE = endpoint('admin', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const ruleId = parseOr422(ruleIdSchema, ctx.params['ruleId']);
  await deleteRule(benchId, ruleId, ctx.user.id);
  return new Response(null, { status: 204 });
});
