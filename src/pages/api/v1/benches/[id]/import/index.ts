import { benchIdSchema } from '../../../../../../lib/contract/wire.ts';
import { ImportError, importCounts, importOptionsSchema, OverlapError } from '../../../../../../lib/server/export/import.ts';
import { withUpload } from '../../../../../../lib/server/export/upload.ts';
import { endpoint } from '../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../../../../lib/server/http/responses.ts';

/** Body: the CSV itself (text/csv); `?title=` names the new run. All or nothing. */
export const POST = endpoint('operator', (ctx) =>
  withUpload(ctx.request, async (body) => {
    const benchId = parseOr422(benchIdSchema, ctx.params['id']);
    const { title } = parseOr422(importOptionsSchema, Object.fromEntries(ctx.url.searchParams));
    try {
      return json(await importCounts(benchId, body, { title, userId: ctx.user.id }), 201);
    } catch (err) {
      if (err instanceof ImportError) return json({ error: err.message, issues: err.issues }, 422);
      if (err instanceof OverlapError) return json({ error: err.message, overlap: err.overlap }, 409);
      throw err;
    }
  }),
);
