import { describe, expect, it } from 'vitest';
import { stepDecimals, trendXRange, trendYRange, trendYSplits, trendYTicks } from './visibility-axes.ts';

describe('visibility trend axes', () => {
  it('labels every tick with the decimals of the step', () => {
    expect(stepDecimals(0.02)).toBe(2);
    expect(stepDecimals(0.005)).toBe(3);
    expect(stepDecimals(0.1)).toBe(1);
    expect(stepDecimals(0.1 + 0.2)).toBe(1);
    expect(stepDecimals(5)).toBe(0);
    expect(trendYTicks(trendYSplits(0.77, 0.81, 0.02), 0.02)).toEqual(['0.78', '0.80']);
    expect(trendYTicks(trendYSplits(0.8, 1, 0.05), 0.05)).toEqual(['0.80', '0.85', '0.90', '0.95', '1.00']);
  });

  it('draws no tick above V = 1, where the range only makes room', () => {
    expect(trendYSplits(0.99, 1.006, 0.002)).toEqual([0.99, 0.992, 0.994, 0.996, 0.998, 1]);
  });

  it('leaves room above and below the points and the alarm limit', () => {
    // The reviewed trend: passes at 0.78–0.80 sat on the top edge.
    const [lo, hi] = trendYRange(0.781, 0.8, null);
    expect(lo).toBeLessThan(0.781 - 0.0025);
    expect(hi).toBeGreaterThan(0.8 + 0.0025);
    // A single pass with a tiny error still gets a readable range around it.
    const [a, b] = trendYRange(0.9842, 0.9844, null);
    expect(b - a).toBeGreaterThanOrEqual(0.01);
    expect(a).toBeLessThan(0.9842);
    expect(b).toBeGreaterThan(0.9844);
    // The alarm line stays inside.
    const [c] = trendYRange(0.95, 0.97, 0.9);
    expect(c).toBeLessThan(0.9);
    expect(trendYRange(null, null, null)).toEqual([0.8, 1]);
    expect(trendYRange(null, null, 0.6)[0]).toBeLessThan(0.6);
  });

  it('spans the whole window up to now when a live trend has nothing to draw', () => {
    const now = 1_800_000_000;
    expect(trendXRange({ from: null, to: null }, null, null, now, 1800)).toEqual([now - 1800, now]);
    // With points, the live axis runs from the first to now; a run's span is its own.
    expect(trendXRange({ from: null, to: null }, now - 600, now - 10, now, 1800)).toEqual([now - 600, now]);
    expect(trendXRange({ from: (now - 60) * 1000, to: now * 1000 }, null, null, now, 1800)).toEqual([now - 90, now + 30]);
  });
});
