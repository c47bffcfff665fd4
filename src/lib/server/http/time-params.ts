import { z } from 'zod';
import { MAX_EPOCH_MS } from '../../contract/wire.ts';

/** A query-string time per the contract: ms since the epoch, or ISO 8601. */
export const timeParam = z
  .string()
  .trim()
  .min(1)
  .transform((s, ctx) => {
    const ms = /^\d+$/.test(s) ? Number(s) : Date.parse(s);
    if (!Number.isFinite(ms)) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `"${s.slice(0, 40)}" is neither ms since the epoch nor ISO 8601` });
      return z.NEVER;
    }
    if (ms > MAX_EPOCH_MS) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `${s.slice(0, 40)} is past the last representable date (${MAX_EPOCH_MS} ms)` });
      return z.NEVER;
    }
    return ms;
  });
