// Mid-fringe from a fit: a zero of cos θ(x) with θ = 2πx/P + φ (the fit's own model, linear case),
// i.e. x = (π/2 − φ + kπ)·P/(2π), common practice for locking at the steepest slope; never outside
// the span the fit covered.
import { describe, expect, it } from 'vitest';
import type { SweepFit } from '../../lib/client/api.ts';
import { midFringeX } from './mid-fringe.ts';

const fit = (xMin?: number, xMax?: number): SweepFit => ({
  amplitudeA: 100, amplitudeB: 100, visibility: 0.9, period: 10, phase: 0, quadratic: 0, darkPerBin: null, shown: 'raw', dtMs: 10,
  ...(xMin !== undefined && { xMin }), ...(xMax !== undefined && { xMax }),
});

describe('midFringeX', () => {
  it('finds the zero crossing nearest the asked point inside the fitted span', () => {
    // Zeros at x = 2.5 + 5k for P = 10, φ = 0.
    expect(midFringeX(fit(0, 30), 0, 30, 11)).toBeCloseTo(12.5, 6);
    expect(midFringeX(fit(0, 30), 0, 75, 37.5)).toBeCloseTo(27.5, 6);
  });

  it('does not extrapolate past the fitted span, and needs the span', () => {
    expect(midFringeX(fit(0, 30), 31, 75, 50)).toBeNull();
    expect(midFringeX(fit(0, 30), 28, 75, 50)).toBeNull();
    expect(midFringeX(fit(), 0, 30, 15)).toBeNull();
  });
});
