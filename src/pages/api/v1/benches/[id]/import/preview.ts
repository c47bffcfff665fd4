import { benchIdSchema } from '../../../../../../lib/contract/wire.ts';
import { previewImport } from '../../../../../../lib/server/export/import.ts';
import { withUpload } from '../../../../../../lib/server/export/upload.ts';
import { endpoint } from '../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422 } from '../../../../../../lib/server/http/responses.ts';

/** Body: the CSV (text/csv). Answers what an import into the bench would store — channels, bin width, first rows, problems, data the bench already holds in that time, warnings — and stores nothing. */
export const POST = endpoint('operator', (ctx) =>
  withUpload(ctx.request, async (body) => {
    const benchId = parseOr422(benchIdSchema, ctx.params['id']);
    return json(await previewImport(benchId, body));
  }),
);
