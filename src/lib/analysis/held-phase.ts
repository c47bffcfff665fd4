// The stretches of a bucketed series where the drive held still, for the Allan deviation: a bucket
// where the drive moved, one without a value, or a new hold position ends a stretch, so no
// difference spans a sweep, a gap or a move between holds and τ stays a true time. The phase takes
// these stretches of the buckets with both outputs read away from the fringe extremes; each
// output's rate the same stretches of its own.
import { FRINGE_EXTREME_MARGIN, phaseAtHold, type HoldCalibration } from './phase.ts';

/** A stretch of consecutive usable buckets at one hold position: indices [start, end). */
export interface HeldRun {
  start: number;
  end: number;
}

/**
 * The runs of consecutive buckets that are `usable` and where the drive held through the bucket
 * (`held`: its position there, null where it moved or is unknown), one position per run.
 */
export function heldRuns(usable: (i: number) => boolean, held: readonly (number | null)[]): HeldRun[] {
  const out: HeldRun[] = [];
  let start = -1;
  let at: number | null = null;
  for (let i = 0; i <= held.length; i++) {
    const x = i < held.length ? (held[i] ?? null) : null;
    const ok = x !== null && usable(i);
    if (start >= 0 && (!ok || x !== at)) {
      out.push({ start, end: i });
      start = -1;
    }
    if (ok && start < 0) {
      start = i;
      at = x;
    }
  }
  return out;
}

/** The held runs of a series with a value in every bucket of a run, as the values of each run. */
export function heldStretches(values: readonly (number | null)[], held: readonly (number | null)[]): { runs: HeldRun[]; stretches: number[][] } {
  const runs = heldRuns((i) => values[i] != null, held);
  return { runs, stretches: runs.map((r) => values.slice(r.start, r.end) as number[]) };
}

export interface PhaseBuckets {
  /** Counts per bucket of each output on one time grid; null where nothing was stored. */
  a: readonly (number | null)[];
  b: readonly (number | null)[];
  /** The drive's position where it held still through the bucket; null where it moved or is unknown. */
  held: readonly (number | null)[];
}

/**
 * Phase θ ∈ [0, π] (rad) of each stretch of consecutive buckets with both outputs at one hold
 * position, with the run of buckets it covers. `cal` carries the per-bucket dark counts.
 * A bucket within FRINGE_EXTREME_MARGIN of a fringe extreme ends a stretch as a missing one does:
 * its reading is clipped and compressed there, and its counting-noise floor grows without limit,
 * so one such bucket would outweigh a stretch of mid-fringe ones in the floor's mean variance and
 * make it meaningless. Leaving them out of the series and the floor alike keeps the two comparable;
 * a stretch then never crosses an extreme, so its phase needs no unfolding, and a drift through
 * one splits the series there (no difference spans the crossing).
 */
export function heldPhaseStretches(buckets: PhaseBuckets, cal: HoldCalibration): { run: HeldRun; phase: Float64Array }[] {
  const theta = buckets.held.map((_, i) => {
    const a = buckets.a[i] ?? null;
    const b = buckets.b[i] ?? null;
    return a !== null && b !== null ? phaseAtHold(a, b, cal).value : Number.NaN;
  });
  const readable = (i: number) => theta[i]! >= FRINGE_EXTREME_MARGIN && theta[i]! <= Math.PI - FRINGE_EXTREME_MARGIN;
  return heldRuns(readable, buckets.held).map((run) => ({ run, phase: Float64Array.from(theta.slice(run.start, run.end)) }));
}
