// Mid-fringe from a fit: a zero of cos θ(x) with θ = 2πx/P + φ (the fit's own model, linear case),
// i.e. x = (π/2 − φ + kπ)·P/(2π), common practice for locking at the steepest slope; never outside
// the span the fit covered; and the pass it comes from chosen by the way the drive will approach.
import { describe, expect, it } from 'vitest';
import type { SweepFit } from '../../lib/client/api.ts';
import { midFringeHold, midFringeX } from './mid-fringe.ts';

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

describe('midFringeHold', () => {
  // Hysteresis modelled as the down pass's fringes sitting 1 V lower than the up pass's.
  const up = { direction: 'up' as const, fit: fit(0, 30) };
  const down = { direction: 'down' as const, fit: { ...fit(0, 30), phase: (2 * Math.PI * 1) / 10 } };

  it('reads the point from the pass that ran the way the drive will move to it', () => {
    // Zeros of the up fit at 2.5 + 5k, of the down fit at 1.5 + 5k (V).
    expect(midFringeHold([up, down], 10, 0, 30, 13)).toEqual({ x: expect.closeTo(12.5, 6), direction: 'up' });
    expect(midFringeHold([up, down], 20, 0, 30, 13)).toEqual({ x: expect.closeTo(11.5, 6), direction: 'down' });
  });

  it('uses the newest pass as it stands when the position is unknown', () => {
    expect(midFringeHold([up, down], null, 0, 30, 13)?.direction).toBe('down');
    expect(midFringeHold([], 10, 0, 30, 13)).toBeNull();
  });
});
