import { recordIdSchema } from '../../../../../../../lib/record-id.ts';
import { z } from 'zod';
import { alarmMessage } from '../../../../../../../lib/alarm-messages.ts';
import { benchIdSchema } from '../../../../../../../lib/contract/wire.ts';
import { publishAlarm } from '../../../../../../../lib/server/alarms/engine.ts';
import { acknowledge } from '../../../../../../../lib/server/alarms/event-store.ts';
import { endpoint } from '../../../../../../../lib/server/http/endpoint.ts';
import { json, parseOr422, readJson } from '../../../../../../../lib/server/http/responses.ts';

const bodySchema = z.object({ comment: z.string().trim().min(1, 'say what was done or seen').max(2000) });

/** An operator acknowledges an alarm with a comment; every client watching the bench sees it. */
export const POST = endpoint('operator', async (ctx) => {
  const benchId = parseOr422(benchIdSchema, ctx.params['id']);
  const eventId = parseOr422(recordIdSchema, ctx.params['eventId']);
  const { comment } = await readJson(ctx.request, bodySchema);
  const view = await acknowledge(benchId, eventId, ctx.user.id, comment);
  publishAlarm(alarmMessage('acknowledged', view));
  return json(view);
});
