import { z } from 'zod';

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
    return ms;
  });
