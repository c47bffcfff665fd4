// Piezo calibration from the fitted fringe period and the bench's wavelength.
import type { FringeFit } from './fringe-fit.ts';
import type { Measured } from './measured.ts';

/**
 * Optical path change per unit of mirror travel, by geometry: a retro-reflecting mirror moved in
 * one arm, 2 (one fringe per λ/2 of travel); a 45° fold mirror, 2·cos45° = √2; a single-pass
 * path element, 1. A bench setting, never assumed.
 */
export const PATH_FACTORS = { retroReflection: 2, fold45: Math.SQRT2, singlePass: 1 } as const;

/**
 * Mirror travel per unit of scan coordinate (nm per volt when x is in volts):
 * λ/(pathFactor·P), with the relative error of P carried over (λ taken as exact).
 */
export function piezoCalibration(period: Measured, wavelengthNm: number, pathFactor: number): Measured {
  if (!(period.value > 0 && wavelengthNm > 0 && pathFactor > 0)) throw new RangeError('period, wavelength and path factor must be positive');
  const value = wavelengthNm / (pathFactor * period.value);
  return { value, err: (value * period.err) / period.value };
}

/**
 * The pass's mean fringe period: with θ = 2π(x + q·x²)/P + φ the phase advance over [x₀, x₁] sets
 * it, P̄ = P·Δx/(Δx + q·(x₁² − x₀²)). Its error from the fit's covariance of P and q (error
 * propagation to first order, common practice): the two are strongly anticorrelated, so scaling
 * P's error alone overstated P̄'s many times over.
 */
export function meanPeriod(fit: Pick<FringeFit, 'period' | 'quadratic' | 'covariance'>, xMin: number, xMax: number): Measured {
  const q = fit.quadratic?.value ?? 0;
  const span = xMax - xMin;
  const s2 = xMax * xMax - xMin * xMin;
  const advance = span + q * s2;
  if (!(advance > 0)) return fit.period;
  const P = fit.period.value;
  const iP = fit.covariance.names.indexOf('P');
  const iq = fit.covariance.names.indexOf('q');
  const c = (i: number, j: number) => fit.covariance.matrix[i]?.[j] ?? 0;
  const gP = span / advance;
  const gq = (-P * span * s2) / (advance * advance);
  const variance = iq < 0 ? gP * gP * c(iP, iP) : gP * gP * c(iP, iP) + 2 * gP * gq * c(iP, iq) + gq * gq * c(iq, iq);
  return { value: P * gP, err: Math.sqrt(Math.max(0, variance)) };
}
