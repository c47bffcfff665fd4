// Piezo calibration from the fitted fringe period and the bench's wavelength.
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
