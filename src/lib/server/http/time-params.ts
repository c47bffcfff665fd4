import { z } from 'zod';
import { MAX_EPOCH_MS } from '../../contract/wire.ts';

/**
 * ISO 8601 date and time, extended format, with its zone: `2026-03-03T14:05Z`,
 * `2026-03-03T14:05:30.250+01:00`. The zone is required: a time without one would be read in the
 * server's zone, which a script cannot know. (Date.parse also takes "March 3", "1 2 3" and "-5".)
 */
const ISO_DATE_TIME = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?(Z|[+-]\d{2}:\d{2})$/i;

/** ms since the epoch of a strict ISO 8601 date and time with zone; null for anything else, impossible dates included. */
export function parseIsoDateTime(s: string): number | null {
  const m = ISO_DATE_TIME.exec(s);
  if (!m) return null;
  const [y, mo, d, h, mi, sec, frac, zone] = [Number(m[1]), Number(m[2]), Number(m[3]), Number(m[4]), Number(m[5]), Number(m[6] ?? 0), m[7] ?? '', m[8]!];
  if (mo < 1 || mo > 12 || d < 1 || h > 23 || mi > 59 || sec > 59) return null;
  // setUTCFullYear, not Date.UTC, which reads years 0–99 as 1900–1999. Day 31 of a 30-day month
  // rolls over: the day must survive the trip.
  const t = new Date(0);
  t.setUTCFullYear(y, mo - 1, d);
  t.setUTCHours(h, mi, sec, Number(frac.slice(0, 3).padEnd(3, '0')));
  if (t.getUTCDate() !== d) return null;
  const local = t.getTime();
  let offsetMin = 0;
  if (zone.toUpperCase() !== 'Z') {
    const oh = Number(zone.slice(1, 3));
    const om = Number(zone.slice(4, 6));
    if (oh > 23 || om > 59) return null;
    offsetMin = (zone[0] === '-' ? -1 : 1) * (oh * 60 + om);
  }
  return local - offsetMin * 60_000;
}

/** A query-string time per the contract: whole ms since the epoch, or ISO 8601 date and time with zone. */
export const timeParam = z
  .string()
  .trim()
  .min(1)
  .transform((s, ctx) => {
    const ms = /^\d+$/.test(s) ? Number(s) : parseIsoDateTime(s);
    if (ms === null || ms < 0) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `"${s.slice(0, 40)}" is neither whole ms since the epoch nor an ISO 8601 date and time with zone (2026-03-03T14:05:00Z)` });
      return z.NEVER;
    }
    if (ms > MAX_EPOCH_MS) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: `${s.slice(0, 40)} is past the last representable date (${MAX_EPOCH_MS} ms)` });
      return z.NEVER;
    }
    return ms;
  });
