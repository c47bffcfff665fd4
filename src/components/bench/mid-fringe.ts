// Where to hold for the steepest slope: the scan coordinate nearest `near` with cos θ(x) = 0, from
// a fit's phase model θ = 2π(x + q·x²)/P + φ, searched within [lo, hi] AND the span the fit's pass
// covered: outside it the model is an extrapolation (the quadratic term alone moves a fringe), so
// the piezo would be sent to a guess. Null when no zero lies there or the fit does not say its span.
import { fringePhase } from '../../lib/analysis/fringe-model.ts';
import type { SweepFit } from '../../lib/client/api.ts';

/** Grid for bracketing zero crossings: far finer than a fringe for any sane sweep. */
const GRID = 2000;

export function midFringeX(fit: SweepFit, from: number, to: number, near: number): number | null {
  if (fit.xMin === undefined || fit.xMax === undefined) return null;
  const lo = Math.max(from, fit.xMin);
  const hi = Math.min(to, fit.xMax);
  if (!(hi > lo)) return null;
  const p = { period: fit.period, phase: fit.phase, quadratic: fit.quadratic };
  const f = (x: number) => Math.cos(fringePhase(x, p));
  let best: number | null = null;
  let prevX = lo;
  let prevF = f(lo);
  for (let i = 1; i <= GRID; i++) {
    const x = lo + ((hi - lo) * i) / GRID;
    const fx = f(x);
    if (prevF === 0 || prevF * fx < 0) {
      // Bisection inside the bracket, to well under a millivolt.
      let a = prevX;
      let b = x;
      for (let k = 0; k < 40; k++) {
        const m = (a + b) / 2;
        if (f(a) * f(m) <= 0) b = m;
        else a = m;
      }
      const root = (a + b) / 2;
      if (best === null || Math.abs(root - near) < Math.abs(best - near)) best = root;
    }
    prevX = x;
    prevF = fx;
  }
  return best;
}

/**
 * Where to hold at mid-fringe, from the latest fitted pass of each direction. Piezo hysteresis
 * puts the fringes elsewhere for each way the drive approaches, so the point comes from a pass that
 * ran the way the drive will move to it from `at` (its position now): up to a point above, down to
 * one below. With the position unknown, or no pass that way giving a point, the newest pass is used
 * as it stands. Null when no pass gives one.
 */
export function midFringeHold(
  passes: { direction: 'up' | 'down'; fit: SweepFit }[],
  at: number | null,
  from: number,
  to: number,
  near: number,
): { x: number; direction: 'up' | 'down' } | null {
  const candidates = passes.flatMap((p) => {
    const x = midFringeX(p.fit, from, to, near);
    return x === null ? [] : [{ x, direction: p.direction }];
  });
  const consistent = at === null ? [] : candidates.filter((c) => (c.direction === 'up' ? c.x > at : c.x < at));
  const pick = consistent.length ? consistent : candidates.slice(-1);
  return pick.reduce<{ x: number; direction: 'up' | 'down' } | null>((best, c) => (best === null || Math.abs(c.x - near) < Math.abs(best.x - near) ? c : best), null);
}
