// Form posts on server-rendered pages: parse the fields with zod, run one action, and turn every
// expected failure into a message the page shows next to the form (with a fitting status).
import { ZodError, type z } from 'zod';
import { errorForLog } from '../log-safe.ts';
import { NotFoundError } from '../provisioning.ts';
import { DuplicateError } from '../users.ts';
import { HttpError, readForm } from './responses.ts';

export type FormOutcome<R> = { ok: true; value: R } | { ok: false; status: number; message: string };

export function describeError(err: unknown): { status: number; message: string } | null {
  if (err instanceof HttpError) return { status: err.status, message: err.message };
  if (err instanceof ZodError) return { status: 422, message: err.issues.map((i) => i.message).join('; ') };
  if (err instanceof DuplicateError) return { status: 409, message: err.message };
  if (err instanceof NotFoundError) return { status: 404, message: err.message };
  return null;
}

/**
 * Runs `action` with the parsed form; sets the response status on failure. Unexpected errors are
 * logged without the form or query values (they may hold passwords) and shown as a generic message.
 */
export async function formAction<T, R>(
  astro: { request: Request; response: { status?: number }; url: URL },
  schema: z.ZodType<T, z.ZodTypeDef, unknown>,
  action: (data: T) => Promise<R>,
): Promise<FormOutcome<R>> {
  try {
    return { ok: true, value: await action(await readForm(astro.request, schema)) };
  } catch (err) {
    const known = describeError(err);
    if (!known) console.error('[form]', astro.url.pathname, errorForLog(err));
    const outcome = known ?? { status: 500, message: 'Something went wrong; the server log has the details.' };
    astro.response.status = outcome.status;
    return { ok: false, ...outcome };
  }
}
