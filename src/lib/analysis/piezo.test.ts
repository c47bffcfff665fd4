import { describe, expect, it } from 'vitest';
import { fitFringes } from './fringe-fit.ts';
import { meanPeriod, PATH_FACTORS, piezoCalibration } from './piezo.ts';
import { simulateSweep } from './test-fixtures.ts';

describe('piezo calibration', () => {
  // A mirror moved d in one arm changes the path by 2d (references.md: one fringe per λ/2 of travel).
  it('gives λ/(2P) for a retro-reflecting mirror: 810 nm over a 2.5 V period → 162 nm/V', () => {
    const c = piezoCalibration({ value: 2.5, err: 0.025 }, 810, PATH_FACTORS.retroReflection);
    expect(c.value).toBeCloseTo(162, 10);
    expect(c.err).toBeCloseTo(1.62, 10);
  });

  it('takes the geometry as a setting: a 45° fold mirror moves λ/√2 per fringe', () => {
    expect(piezoCalibration({ value: 1, err: 0 }, 810, PATH_FACTORS.fold45).value).toBeCloseTo(810 / Math.SQRT2, 10);
    expect(() => piezoCalibration({ value: 1, err: 0 }, 810, 0)).toThrow(RangeError);
  });
});

describe('mean fringe period of a pass with a quadratic piezo term', () => {
  it('carries the period–curvature covariance: its error matches the scatter over replicas', () => {
    // Common practice (first-order error propagation); outside check: the standard deviation of
    // P̄ over independent Poisson replicas against the reported 1σ (200 replicas: ±5 %, 1σ).
    const [from, to] = [50, 75];
    const values: number[] = [];
    let err = 0;
    let naive = 0;
    const replicas = 200;
    for (let t = 0; t < replicas; t++) {
      const s = simulateSweep({ bins: 250, from, to, period: 6, phase: 0.3, quadratic: 0.002, seed: 500 + t });
      const r = fitFringes(s, { quadratic: true });
      if (!r.ok) throw new Error(r.reason);
      const m = meanPeriod(r, from, to);
      values.push(m.value);
      err += m.err / replicas;
      naive += (r.period.err * m.value) / r.period.value / replicas;
    }
    const mean = values.reduce((a, b) => a + b, 0) / replicas;
    const sd = Math.sqrt(values.reduce((a, b) => a + (b - mean) ** 2, 0) / (replicas - 1));
    expect(Math.abs(sd / err - 1)).toBeLessThan(0.15);
    // Scaling P's own error, as before, overstates it many times.
    expect(naive / sd).toBeGreaterThan(5);
  });
});
