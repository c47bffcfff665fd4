import { benchIdSchema } from '../../../../../lib/contract/wire.ts';
import { exportFilename, exportQuerySchema, exportStream, planExport } from '../../../../../lib/server/export/export.ts';
import { endpoint } from '../../../../../lib/server/http/endpoint.ts';
import { parseOr422 } from '../../../../../lib/server/http/responses.ts';

/** `?from=&to=` (ms or ISO 8601) or `?run=<id>`, `format=csv|json`: the raw bins, streamed. */
export const GET = endpoint('observer', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const plan = await planExport(benchId, parseOr422(exportQuerySchema, Object.fromEntries(ctx.url.searchParams)));
  return new Response(exportStream(plan), {
    headers: {
      'content-type': plan.format === 'csv' ? 'text/csv; charset=utf-8' : 'application/json; charset=utf-8',
      'content-disposition': `attachment; filename="${exportFilename(plan)}"`,
      'cache-control': 'no-store',
    },
  });
});
