import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { HttpError, json, parseOr422, readJson } from '../../../../../lib/server/http/responses.ts';
import { addNote, getRun, listNotes } from '../../../../../lib/server/runs.ts';
import { addNoteSchema, runIdSchema } from '../../../../../lib/runs.ts';

export const GET = endpoint('observer', async (ctx) => {
  const id = parseOr422(runIdSchema, ctx.params['id']);
  if (!(await getRun(id))) throw new HttpError(404, `no run ${id}`);
  return json(await listNotes(id));
});

export const POST = endpoint('operator', async (ctx) => {
  const id = parseOr422(runIdSchema, ctx.params['id']);
  const body = await readJson(ctx.request, addNoteSchema);
  return json(await addNote(id, body, ctx.user.id), 201);
});
