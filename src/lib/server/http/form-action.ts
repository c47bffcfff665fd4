// Form posts on server-rendered pages: parse the fields with zod, run one action, and turn every
// expected failure into a message the page shows next to the form (with a fitting status). A refused
// post keeps what was typed, so the page can show the form again as it was sent (`refill`).
import { ZodError, type z } from 'zod';
import { errorForLog } from '../log-safe.ts';
import { NotFoundError } from '../provisioning.ts';
import { DuplicateError } from '../users.ts';
import { HttpError, readFormFields } from './responses.ts';

/** Field name → the words the form's label uses for it, so a message names the box to fix. */
export type FieldLabels = Readonly<Record<string, string>>;

export type FormOutcome<R> =
  | { ok: true; value: R }
  | {
      ok: false;
      status: number;
      message: string;
      /** The fields as posted (empty when the body was not a readable form). */
      typed: ReadonlyMap<string, string>;
      /** The first complaint about each field that has one. */
      fieldErrors: ReadonlyMap<string, string>;
    };

function fieldOf(issue: z.ZodIssue): string | null {
  const first = issue.path[0];
  return typeof first === 'string' ? first : null;
}

function labelOf(labels: FieldLabels, field: string): string {
  return Object.hasOwn(labels, field) ? (labels[field] ?? field) : field;
}

/** The field a refusal concerns and its message, each zod issue's or the one of a named-field error. */
function complaints(err: unknown): { field: string | null; message: string }[] {
  if (err instanceof ZodError) return err.issues.map((i) => ({ field: fieldOf(i), message: i.message }));
  if (err instanceof HttpError || err instanceof DuplicateError) return [{ field: err.field ?? null, message: err.message }];
  if (err instanceof NotFoundError) return [{ field: null, message: err.message }];
  return [];
}

export function describeError(err: unknown, labels: FieldLabels = {}): { status: number; message: string } | null {
  const status = err instanceof HttpError ? err.status : err instanceof ZodError ? 422 : err instanceof DuplicateError ? 409 : err instanceof NotFoundError ? 404 : null;
  if (status === null) return null;
  const lines = complaints(err).map((c) => (c.field === null ? c.message : `${labelOf(labels, c.field)}: ${c.message}`));
  return { status, message: [...new Set(lines)].join('; ') };
}

function fieldErrors(err: unknown): Map<string, string> {
  const out = new Map<string, string>();
  for (const { field, message } of complaints(err)) if (field !== null && !out.has(field)) out.set(field, message);
  return out;
}

/**
 * Runs `action` with the parsed form; sets the response status on failure. A ZodError, whether
 * from `schema` or from the action's own validation, names each field by its label. Unexpected
 * errors are logged without the form or query values (they may hold passwords) and shown as a
 * generic message.
 */
export async function formAction<T, R>(
  astro: { request: Request; response: { status?: number }; url: URL },
  schema: z.ZodType<T, z.ZodTypeDef, unknown>,
  action: (data: T) => Promise<R>,
  labels: FieldLabels = {},
): Promise<FormOutcome<R>> {
  let typed = new Map<string, string>();
  try {
    const fields = await readFormFields(astro.request);
    typed = new Map(Object.entries(fields));
    const parsed = schema.safeParse(fields);
    if (!parsed.success) throw parsed.error;
    return { ok: true, value: await action(parsed.data) };
  } catch (err) {
    const known = describeError(err, labels);
    if (!known) console.error('[form]', astro.url.pathname, errorForLog(err));
    const outcome = known ?? { status: 500, message: 'Something went wrong; the server log has the details.' };
    astro.response.status = outcome.status;
    return { ok: false, ...outcome, typed, fieldErrors: fieldErrors(err) };
  }
}

/** One form of a page as it should be shown again after a post. */
export interface Refill {
  /** Whether the refused post came from this form. */
  readonly active: boolean;
  /** What was typed into `name` when this form's post was refused, else `stored` ('' for none). */
  value(name: string, stored: string | number | null | undefined): string;
  /** A checkbox: as it was sent (browsers send only ticked boxes), else `stored`. */
  checked(name: string, stored: boolean): boolean;
  error(name: string): string | undefined;
  /** The box's ARIA attributes: marked invalid and described by its error (see FieldError.astro) and any hint. */
  aria(name: string, id: string, hint?: string): { 'aria-invalid'?: 'true'; 'aria-describedby'?: string };
}

/**
 * The form whose hidden fields equal `match` (its intent, and the row it edits where a page has one
 * form per row), refilled from a refused post. Password boxes are never refilled: pages do not ask.
 */
export function refill(outcome: FormOutcome<unknown> | null, match: Readonly<Record<string, string>>): Refill {
  const refused = outcome && !outcome.ok && Object.entries(match).every(([k, v]) => outcome.typed.get(k) === v) ? outcome : null;
  return {
    active: refused !== null,
    value: (name, stored) => (refused ? (refused.typed.get(name) ?? '') : stored === null || stored === undefined ? '' : String(stored)),
    checked: (name, stored) => (refused ? refused.typed.has(name) : stored),
    error: (name) => refused?.fieldErrors.get(name),
    aria: (name, id, hint) => {
      const described = [hint, refused?.fieldErrors.has(name) ? `${id}-error` : undefined].filter(Boolean).join(' ');
      return { ...(refused?.fieldErrors.has(name) ? { 'aria-invalid': 'true' as const } : {}), ...(described ? { 'aria-describedby': described } : {}) };
    },
  };
}
