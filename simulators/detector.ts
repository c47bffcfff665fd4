// A single-photon detector: efficiency, dark counts, non-paralyzable dead time, afterpulsing.
import type { Rng } from './random.ts';
import { binomial, poisson } from './random.ts';

export interface DetectorModel {
  /** Overall probability that a photon leaving the beamsplitter output clicks (coupling × detector). */
  efficiency: number;
  /** Dark count rate, counts/s (Si SPADs 25–500, InGaAs SPADs ~10³ [practice]). */
  darkRate: number;
  /** Non-paralyzable dead time, ns (Si SPADs 20–50, InGaAs 1000–20000 [practice]). */
  deadTimeNs: number;
  /** Probability that a click is followed by an afterpulse (Si 0.005–0.01 [practice]). */
  afterpulsing: number;
}

/**
 * Measured rate of a non-paralyzable detector for a true rate n (1/s) and dead time τ (s):
 * m = n/(1 + nτ), the inverse of n = m/(1 − mτ) (Knoll, Radiation Detection and Measurement,
 * 4th ed., ch. 4).
 */
export function nonParalyzable(trueRate: number, deadTimeS: number): number {
  return trueRate / (1 + trueRate * deadTimeS);
}

/** Fraction of time a non-paralyzable detector is live at true rate n (1/s), 1/(1 + nτ). */
export function liveFraction(trueRate: number, deadTimeS: number): number {
  return 1 / (1 + trueRate * deadTimeS);
}

/**
 * Clicks in one bin of T seconds at a true (photon + dark) rate n. A Poisson stream thinned by
 * the live fraction is again Poisson, so the mean measured count is exactly n/(1 + nτ)·T. Real
 * dead-time-limited counts are also narrower, variance m·T·(1 − mτ)² (renewal theory); that is
 * ignored: under 1% on Si SPADs, about 17% at the 1550 nm demo bench's bright fringe.
 * Afterpulses then add Binomial(clicks, p): each click may trigger at most one.
 */
export function clicks(rng: Rng, trueRate: number, deadTimeS: number, afterpulsing: number, binS: number): number {
  const k = poisson(rng, nonParalyzable(trueRate, deadTimeS) * binS);
  return afterpulsing > 0 ? k + binomial(rng, k, afterpulsing) : k;
}
