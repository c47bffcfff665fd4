// The interferometer phase bucket by bucket while the drive held still, as contiguous stretches for
// the Allan deviation: a bucket where the drive moved, one missing either output, or a new hold
// position ends a stretch, so no difference spans a sweep or a gap and τ stays a true time.
import { phaseAtHold, unfoldPhase, type HoldCalibration } from './phase.ts';

export interface PhaseBuckets {
  /** Counts per bucket of each output on one time grid; null where nothing was stored. */
  a: readonly (number | null)[];
  b: readonly (number | null)[];
  /** The drive's position where it held still through the bucket; null where it moved or is unknown. */
  held: readonly (number | null)[];
}

/**
 * Unfolded phase (rad) of each stretch of consecutive usable buckets at one hold position. `cal`
 * carries the per-bucket dark counts. Unfolding runs within a stretch only: across a gap the phase
 * may have moved by any amount.
 */
export function heldPhaseStretches(buckets: PhaseBuckets, cal: HoldCalibration): Float64Array[] {
  const out: Float64Array[] = [];
  let run: number[] = [];
  let at: number | null = null;
  const close = () => {
    if (run.length) out.push(unfoldPhase(run));
    run = [];
  };
  for (let i = 0; i < buckets.held.length; i++) {
    const a = buckets.a[i] ?? null;
    const b = buckets.b[i] ?? null;
    const x = buckets.held[i] ?? null;
    const theta = a !== null && b !== null && x !== null ? phaseAtHold(a, b, cal).value : Number.NaN;
    if (!Number.isFinite(theta) || x !== at) close();
    at = x;
    if (Number.isFinite(theta)) run.push(theta);
  }
  close();
  return out;
}
