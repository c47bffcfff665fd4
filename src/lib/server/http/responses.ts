// JSON responses and request-body parsing shared by every endpoint: one shape for errors,
// `{ "error": "…" }`, as the contract asks.
import type { z } from 'zod';

export class HttpError extends Error {
  constructor(
    readonly status: number,
    message: string,
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

/** Parses a JSON body against a schema; throws HttpError 400/413/422 with a clear reason. */
export async function readJson<T>(request: Request, schema: z.ZodType<T, z.ZodTypeDef, unknown>): Promise<T> {
  const text = await request.text();
  if (text.length > MAX_JSON_BODY) throw new HttpError(413, 'request body too large');
  let body: unknown;
  try {
    body = JSON.parse(text);
  } catch {
    throw new HttpError(400, 'request body is not valid JSON');
  }
  return parseOr422(schema, body);
}

/** Parses form fields against a schema (throws HttpError 422 with the reason). */
export async function readForm<T>(request: Request, schema: z.ZodType<T, z.ZodTypeDef, unknown>): Promise<T> {
  let form: FormData;
  try {
    form = await request.formData();
  } catch {
    throw new HttpError(400, 'request body is not a form');
  }
  const obj: Record<string, string> = {};
  for (const [k, v] of form.entries()) if (typeof v === 'string') obj[k] = v;
  return parseOr422(schema, obj);
}

export function parseOr422<T>(schema: z.ZodType<T, z.ZodTypeDef, unknown>, value: unknown): T {
  const parsed = schema.safeParse(value);
  if (!parsed.success) throw new HttpError(422, describe(parsed.error));
  return parsed.data;
}
