// The stability endpoint's answer (GET /api/v1/benches/{id}/stability): pure types and their zod
// schema, shared by the server that computes it and the history island that draws it.
import { z } from 'zod';
import type { AllanPoint } from './analysis/allan.ts';

export interface RateStability {
  channel: string;
  role: string;
  /** Mean rate over the range, counts/s. */
  meanRate: number;
  /** `poissonLimit`: √(R/τ), counts/s, the white counting-noise floor the rate cannot beat. */
  points: (AllanPoint & { poissonLimit: number })[];
}

export interface Stability {
  from: number;
  to: number;
  /** τ₀: the bucket the series were read at, s. */
  tau0: number;
  rates: RateStability[];
  /**
   * Allan deviation of the phase (rad) over the buckets where the drive held still, pooled over the
   * `stretches` of consecutive such buckets at one position; null without a visibility to scale
   * by or without enough held buckets. `net`: the visibility is net of darks (shownVisibility), and
   * the darks were taken off the counts to match.
   */
  phase: { visibility: number; net: boolean; points: AllanPoint[]; heldBuckets: number; stretches: number } | null;
  /** Most buckets with no stored bins in any one channel; each series is split at them, never joined across. */
  missingBuckets: number;
}

const allanPoint = z.object({ tau: z.number(), adev: z.number(), err: z.number(), lo: z.number(), hi: z.number(), edf: z.number(), terms: z.number() });

export const stabilitySchema: z.ZodType<Stability> = z.object({
  from: z.number(),
  to: z.number(),
  tau0: z.number().positive(),
  rates: z.array(z.object({ channel: z.string(), role: z.string(), meanRate: z.number(), points: z.array(allanPoint.extend({ poissonLimit: z.number() })) })),
  phase: z.object({ visibility: z.number(), net: z.boolean(), points: z.array(allanPoint), heldBuckets: z.number(), stretches: z.number() }).nullable(),
  missingBuckets: z.number(),
});
