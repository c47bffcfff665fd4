import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import { garwoodInterval, garwoodRateInterval } from './poisson-intervals.ts';
import { ONE_SIGMA_CL } from './special-functions.ts';

describe('Garwood Poisson limits', () => {
  // Gehrels, ApJ 303, 336 (1986), Tables 1 and 2, 1σ columns (table numbers from memory; values as
  // printed in references.md, 3–4 significant figures).
  const upper = [1.841, 3.3, 4.638, 5.918, 7.163, 8.382, 9.584, 10.77, 11.95, 13.11, 14.27];
  const lower = [0, 0.173, 0.708, 1.367, 2.086, 2.84, 3.62, 4.419, 5.232, 6.057, 6.891];

  it('reproduce the Gehrels (1986) 1σ table for n = 0..10', () => {
    upper.forEach((u, n) => {
      const ci = garwoodInterval(n);
      expect(Math.abs(ci.upper - u)).toBeLessThan(0.006);
      expect(Math.abs(ci.lower - (lower[n] as number))).toBeLessThan(0.0006);
    });
  });

  it('equal ½χ² quantiles from jstat.chisquare.inv (independent statistics package, npm)', () => {
    for (const n of [0, 1, 2, 5, 17, 100, 2500]) {
      for (const cl of [ONE_SIGMA_CL, 0.9, 0.975]) {
        const ci = garwoodInterval(n, cl);
        expect(ci.upper).toBeCloseTo(jStat.chisquare.inv(cl, 2 * n + 2) / 2, 7);
        if (n > 0) expect(ci.lower).toBeCloseTo(jStat.chisquare.inv(1 - cl, 2 * n) / 2, 7);
      }
    }
  });

  it('give rate limits for the 0.1 counts/s regime', () => {
    const ci = garwoodRateInterval(3, 30);
    expect(ci.lower).toBeCloseTo(1.367 / 30, 4);
    expect(ci.upper).toBeCloseTo(5.918 / 30, 3);
  });

  it('reject impossible counts', () => {
    expect(() => garwoodInterval(-1)).toThrow(RangeError);
    expect(() => garwoodInterval(2.5)).toThrow(RangeError);
  });
});
