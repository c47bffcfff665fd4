// A form post that does harm at once (revoking a gateway, deactivating someone, deleting a rule)
// must carry `confirmed=yes`. Without it the page changes nothing and shows the question instead
// (ConfirmPanel.astro), whose button posts the same fields confirmed: the step holds without
// JavaScript, and no stale form or slip skips it. With JavaScript, ConfirmForm.astro asks in a
// dialog first and sends the field itself, so the page is posted once.
import { z } from 'zod';
import { CONFIRM_VALUE, type Confirmation } from '../../confirmations.ts';

/** The field in an action's schema: true only for the value a confirm button sends. */
export const confirmedField = z
  .string()
  .optional()
  .transform((v) => v === CONFIRM_VALUE);

/** What an action returns instead of acting on an unconfirmed post. */
export class AskFirst {
  constructor(
    readonly confirmation: Confirmation,
    /** The post's own fields, sent again with the confirmation. */
    readonly fields: Readonly<Record<string, string>>,
  ) {}
}

/** The question a page shows for its form outcome, if the post was not confirmed. */
export function askedFirst(outcome: { ok: true; value: unknown } | { ok: false } | null): AskFirst | null {
  return outcome?.ok && outcome.value instanceof AskFirst ? outcome.value : null;
}
