// Dead-time correction of a measured count rate (Knoll, Radiation Detection and Measurement, 4th
// ed., ch. 4): non-paralyzable m = n/(1 + nτ), inverted n = m/(1 − mτ); paralyzable m = n·e^(−nτ),
// inverted on the low-rate branch n = −W₀(−mτ)/τ. Both carry the Poisson uncertainty of m along.
import { lambertW0 } from './lambert-w.ts';
import type { Measured } from './measured.ts';

export type DeadTimeModel = 'non-paralyzable' | 'paralyzable';

/**
 * Dead-time loss (1 − m/n) above which the screen warns: about 10% (mτ ≈ 0.09) is where the
 * correction starts to dominate the error budget (common practice).
 */
export const DEAD_TIME_LOSS_WARNING = 0.1;

export type DeadTimeResult =
  | {
      ok: true;
      /** True (incident) rate n, counts/s, with its uncertainty propagated from m. */
      rate: Measured;
      /** Fraction of events lost to dead time, 1 − m/n. */
      lossFraction: number;
      warnings: string[];
    }
  | { ok: false; reason: string };

/**
 * Correct a measured rate `m` (counts/s, uncertainty `mErr`) for dead time `tau` (s).
 * Refuses where the model has no solution: mτ ≥ 1 (non-paralyzable) or mτ > 1/e (paralyzable:
 * the measured rate cannot exceed its maximum 1/(eτ), and near it the inversion is unstable).
 */
export function correctDeadTime(m: Measured, tau: number, model: DeadTimeModel): DeadTimeResult {
  if (!(tau >= 0)) return { ok: false, reason: `dead time must be non-negative, got ${tau} s` };
  if (!(m.value >= 0)) return { ok: false, reason: `measured rate must be non-negative, got ${m.value} /s` };
  const x = m.value * tau;
  let n: number;
  let dndm: number;
  if (model === 'non-paralyzable') {
    if (x >= 1) return { ok: false, reason: `m·τ = ${x.toPrecision(3)} ≥ 1: the detector is saturated; the non-paralyzable model has no solution` };
    n = m.value / (1 - x);
    dndm = 1 / ((1 - x) * (1 - x));
  } else {
    if (x > 1 / Math.E) {
      return { ok: false, reason: `m·τ = ${x.toPrecision(3)} > 1/e: above the paralyzable maximum rate; the true rate is ambiguous` };
    }
    n = tau === 0 ? m.value : -lambertW0(-x) / tau;
    const nt = n * tau;
    // dm/dn = e^(−nτ)(1 − nτ); diverges at the branch point where nτ = 1.
    dndm = nt >= 1 ? Number.POSITIVE_INFINITY : Math.exp(nt) / (1 - nt);
  }
  const lossFraction = n > 0 ? 1 - m.value / n : 0;
  const warnings: string[] = [];
  if (lossFraction > DEAD_TIME_LOSS_WARNING) {
    warnings.push(`dead-time loss ${(100 * lossFraction).toFixed(1)}% exceeds ${100 * DEAD_TIME_LOSS_WARNING}%: the corrected rate depends strongly on τ`);
  }
  return { ok: true, rate: { value: n, err: Math.abs(dndm) * m.err }, lossFraction, warnings };
}

/**
 * Counts a detector records from `trueCounts` expected in an interval whose length is `tauOver`
 * dead times' inverse (τ over the interval), the forward model above: what a fit curve is drawn as.
 */
export function countsThroughDeadTime(trueCounts: number, tauOver: number, model: DeadTimeModel): number {
  return model === 'paralyzable' ? trueCounts * Math.exp(-trueCounts * tauOver) : trueCounts / (1 + trueCounts * tauOver);
}

/**
 * The counts a detector would have recorded in `seconds` without its dead time `tau` (s): the
 * correction above applied to their mean rate; the counts as they are where it is refused
 * (saturated) or there is nothing to correct.
 */
export function countsBeforeDeadTime(counts: number, seconds: number, tau: number, model: DeadTimeModel): number {
  if (!(tau > 0 && counts > 0 && seconds > 0)) return counts;
  const r = correctDeadTime({ value: counts / seconds, err: 0 }, tau, model);
  return r.ok ? r.rate.value * seconds : counts;
}
