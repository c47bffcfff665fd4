// JSON responses and request-body parsing shared by every endpoint: one shape for errors,
// `{ "error": "…" }`, as the contract asks.
import type { z } from 'zod';

export class HttpError extends Error {
  constructor(
    readonly status: number,
    message: string,
    /** The form field at fault, where there is one: a form shows the message next to it. */
    readonly field?: string,
  ) {
    super(message);
  }
}

export function json(data: unknown, status = 200, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify(data), { status, headers: { 'content-type': 'application/json; charset=utf-8', ...headers } });
}

export function problem(status: number, error: string): Response {
  return json({ error }, status);
}

function describe(error: z.ZodError): string {
  const issue = error.issues[0];
  if (!issue) return 'invalid input';
  return (issue.path.length ? issue.path.join('.') + ': ' : '') + issue.message;
}

const MAX_JSON_BODY = 1024 * 1024;
/** Our forms hold a few short fields; a sign-in or admin form past this is not one of them. */
const MAX_FORM_BODY = 64 * 1024;
/** PostgreSQL's text and jsonb cannot hold U+0000; refused here as bad input instead of failing there. */
const NUL_MESSAGE = 'text may not contain NUL characters';

/** The body's bytes, refused with 413 past `max` (by its Content-Length, else while it streams): nothing larger is held in memory. */
async function readCapped(request: Request, max: number): Promise<Uint8Array<ArrayBuffer>> {
  const declared = Number(request.headers.get('content-length') ?? 0);
  if (declared > max) throw new HttpError(413, 'request body too large');
  if (!request.body) return new Uint8Array(0);
  const chunks: Uint8Array[] = [];
  let total = 0;
  const reader = request.body.getReader();
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > max) {
      await reader.cancel();
      throw new HttpError(413, 'request body too large');
    }
    chunks.push(value);
  }
  return new Uint8Array(Buffer.concat(chunks));
}

/** Parses a JSON body against a schema; throws HttpError 400/413/422 with a clear reason. */
export async function readJson<T>(request: Request, schema: z.ZodType<T, z.ZodTypeDef, unknown>): Promise<T> {
  let text: string;
  try {
    // Fatal: bytes that are no UTF-8 are refused, not stored as U+FFFD in someone's note or title.
    text = new TextDecoder('utf-8', { fatal: true }).decode(await readCapped(request, MAX_JSON_BODY));
  } catch (err) {
    if (err instanceof HttpError) throw err;
    throw new HttpError(400, 'request body is not valid UTF-8');
  }
  let body: unknown;
  let nul = false;
  try {
    body = JSON.parse(text, (key, value: unknown) => {
      if (key.includes('\0') || (typeof value === 'string' && value.includes('\0'))) nul = true;
      return value;
    });
  } catch {
    throw new HttpError(400, 'request body is not valid JSON');
  }
  if (nul) throw new HttpError(422, NUL_MESSAGE);
  return parseOr422(schema, body);
}

/** A form's text fields; throws HttpError 400 (not a form), 413 (too large) or 422 (a NUL character). */
export async function readFormFields(request: Request): Promise<Record<string, string>> {
  const bytes = await readCapped(request, MAX_FORM_BODY);
  let form: FormData;
  try {
    form = await new Response(bytes, { headers: { 'content-type': request.headers.get('content-type') ?? '' } }).formData();
  } catch {
    throw new HttpError(400, 'request body is not a form');
  }
  const fields: [string, string][] = [];
  for (const [k, v] of form.entries()) {
    if (typeof v !== 'string') continue;
    if (k.includes('\0') || v.includes('\0')) throw new HttpError(422, NUL_MESSAGE);
    fields.push([k, v]);
  }
  // Field names are the client's: own properties only, so a field "__proto__" cannot set the prototype.
  return Object.fromEntries(fields);
}

/** Parses form fields against a schema (throws HttpError 400/413/422 with the reason). */
export async function readForm<T>(request: Request, schema: z.ZodType<T, z.ZodTypeDef, unknown>): Promise<T> {
  return parseOr422(schema, await readFormFields(request));
}

export function parseOr422<T>(schema: z.ZodType<T, z.ZodTypeDef, unknown>, value: unknown): T {
  const parsed = schema.safeParse(value);
  if (!parsed.success) throw new HttpError(422, describe(parsed.error));
  return parsed.data;
}
