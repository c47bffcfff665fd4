import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../lib/server/http/responses.ts';
import { listRuns, startRun } from '../../../../../lib/server/runs.ts';
import { startRunSchema } from '../../../../../lib/runs.ts';
import { benchIdSchema } from '../../../../../lib/contract/wire.ts';

export const GET = endpoint('observer', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  return json(await listRuns({ benchId }));
});

export const POST = endpoint('operator', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const body = await readJson(ctx.request, startRunSchema);
  return json(await startRun(benchId, body, ctx.user.id), 201);
});
