// The stability endpoint's answer (GET /api/v1/benches/{id}/stability): pure types and their zod
// schema, shared by the server that computes it and the history island that draws it.
import { z } from 'zod';
import type { AllanPoint } from './analysis/allan.ts';

/** An Allan point beside the floor counting noise alone gives at its τ (in the series' unit). */
export type FlooredPoint = AllanPoint & { poissonLimit: number };

/**
 * A channel's rate over the buckets where its gateway's drive held still (the phase's stretches),
 * split where it moved or settled elsewhere: a sweep runs the rate over the fringe's whole depth.
 * `covers` says which: 'held', or 'whole' where no raw bin of the range is left to tell (rollups
 * keep no drive positions), split only at missing buckets, sweeps included. A gateway whose raw
 * bins carry no positions has no drive: all its buckets hold.
 */
export interface RateStability {
  channel: string;
  role: string;
  covers: 'held' | 'whole';
  /** Mean rate over the buckets the curve covers, counts/s. */
  meanRate: number;
  /** Buckets the curve covers, in `stretches` stretches. */
  buckets: number;
  stretches: number;
  /** The channel has a dead time set, which thins the counting noise: the floor is √(R/τ)·(1 − Rτ_d) (Müller 1973). */
  deadTime: boolean;
  /** `poissonLimit`: the Poisson counting noise of the covered buckets' rates, √(R/τ) at a steady rate R, counts/s. */
  points: FlooredPoint[];
}

export interface Stability {
  from: number;
  to: number;
  /** τ₀: the bucket the series were read at, s. */
  tau0: number;
  rates: RateStability[];
  /**
   * Allan deviation of the phase (rad) over the buckets where the drive held still and the phase
   * read away from the fringe extremes, pooled over the `stretches` of consecutive such buckets at
   * one position; null without a visibility to scale by or without enough such buckets. `net`: the
   * visibility is net of darks (shownVisibility), and the darks were taken off the counts to match.
   * `poissonLimit`: the Cramér–Rao bound of each bucket's two output counts at its phase, dark
   * counts included (phaseFloor; 1/(V√N) at mid-fringe without darks), carried to τ: the least
   * noise counting alone leaves in a phase read from those counts.
   */
  phase: { visibility: number; net: boolean; points: FlooredPoint[]; heldBuckets: number; stretches: number } | null;
  /** Most buckets with no stored bins in any one channel; each series is split at them, never joined across. */
  missingBuckets: number;
}

const flooredPoint = z.object({ tau: z.number(), adev: z.number(), err: z.number(), lo: z.number(), hi: z.number(), edf: z.number(), terms: z.number(), poissonLimit: z.number() });

export const stabilitySchema: z.ZodType<Stability> = z.object({
  from: z.number(),
  to: z.number(),
  tau0: z.number().positive(),
  rates: z.array(z.object({ channel: z.string(), role: z.string(), covers: z.enum(['held', 'whole']), meanRate: z.number(), buckets: z.number(), stretches: z.number(), deadTime: z.boolean(), points: z.array(flooredPoint) })),
  phase: z.object({ visibility: z.number(), net: z.boolean(), points: z.array(flooredPoint), heldBuckets: z.number(), stretches: z.number() }).nullable(),
  missingBuckets: z.number(),
});
