// Split a scan coordinate into monotonic passes: a piezo's up and down sweeps trace different
// curves (hysteresis about 2% small-signal, 10–15% full stroke: common practice), so each pass is
// fitted on its own.

export type SweepDirection = 'up' | 'down';

export interface SweepPass {
  /** First bin of the pass (inclusive). */
  start: number;
  /** One past the last bin of the pass. */
  end: number;
  direction: SweepDirection;
}

export interface SweepSplitOptions {
  /**
   * Motion against the current direction, in x units, that still counts as noise. Defaults to five
   * times a robust estimate of the per-bin jitter (from second differences, which a linear ramp
   * and flat dwell repeats leave at zero).
   */
  tolerance?: number;
  /** Passes with fewer bins are dropped: a fringe fit needs more points than parameters. */
  minPoints?: number;
}

/** Shortest pass kept by default, bins: the joint fit has up to six parameters. */
const DEFAULT_MIN_POINTS = 8;

function jitterTolerance(x: ArrayLike<number>): number {
  const n = x.length;
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < n; i++) {
    const v = x[i] as number;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  const d2 = new Float64Array(Math.max(0, n - 2));
  for (let i = 1; i < n - 1; i++) d2[i - 1] = Math.abs((x[i + 1] as number) - 2 * (x[i] as number) + (x[i - 1] as number));
  d2.sort();
  // Median |second difference| of white jitter σ is 0.6745·√6·σ.
  const sigma = d2.length > 0 ? (d2[d2.length >> 1] as number) / (0.6745 * Math.sqrt(6)) : 0;
  return Math.max(5 * sigma, 1e-9 * (hi - lo));
}

/**
 * Monotonic passes of `x`, in order. A reversal is declared only when x has moved back from the
 * running extreme by more than the tolerance; the pass then ends at that extreme.
 */
export function splitSweeps(x: ArrayLike<number>, options: SweepSplitOptions = {}): SweepPass[] {
  const n = x.length;
  const tol = options.tolerance ?? jitterTolerance(x);
  const minPoints = options.minPoints ?? DEFAULT_MIN_POINTS;
  const passes: SweepPass[] = [];
  if (n < 2) return passes;
  let start = 0;
  let dir = 0; // +1 up, −1 down, 0 not yet moved beyond the tolerance
  let extremeIdx = 0;
  for (let i = 1; i < n; i++) {
    const v = x[i] as number;
    const ext = x[extremeIdx] as number;
    if (dir === 0) {
      const anchor = x[start] as number;
      if (Math.abs(v - anchor) > tol) {
        dir = v > anchor ? 1 : -1;
        extremeIdx = i;
      }
      continue;
    }
    if ((v - ext) * dir > 0) {
      extremeIdx = i;
    } else if ((ext - v) * dir > tol) {
      if (extremeIdx + 1 - start >= minPoints) passes.push({ start, end: extremeIdx + 1, direction: dir > 0 ? 'up' : 'down' });
      start = extremeIdx + 1;
      dir = -dir;
      // The new pass has already moved past the tolerance from the turning point.
      extremeIdx = i;
    }
  }
  if (dir !== 0 && n - start >= minPoints) passes.push({ start, end: n, direction: dir > 0 ? 'up' : 'down' });
  return passes;
}
