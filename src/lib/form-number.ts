// A number typed into a form box, read one way everywhere. A decimal comma ("0,8") is refused, not
// read as 0.8: "1,000" would then be 1 to one reader and a thousand to another, and a limit or a
// threshold off by a factor of 1000 is worse than a second try. The message says what to type.
import { z } from 'zod';

export const NUMBER_HINT = 'enter a number with a decimal point, such as 0.8';

/**
 * Text from a form (or a number from JSON) as a finite number; an empty box is a missing number,
 * not 0. `bounds` adds the field's own checks (`(n) => n.min(1)`).
 */
export const formNumber = (bounds: (n: z.ZodNumber) => z.ZodNumber = (n) => n): z.ZodEffects<z.ZodNumber, number, unknown> =>
  z.preprocess(readFormNumber, bounds(finiteNumber()));

/** A box's text as a number for `finiteNumber` to check: '' is undefined (missing), what is no number NaN. */
export function readFormNumber(v: unknown): unknown {
  const n = typeof v === 'string' ? (v.trim() === '' ? undefined : Number(v)) : v;
  // ±Infinity as NaN: a type error stops zod there, so "Infinity" gets one message, not also the bounds'.
  return typeof n === 'number' && !Number.isFinite(n) ? NaN : n;
}

/** A number with the messages above; finite once it went through `readFormNumber`. */
export const finiteNumber = (): z.ZodNumber => z.number({ required_error: 'enter a number', invalid_type_error: NUMBER_HINT });
