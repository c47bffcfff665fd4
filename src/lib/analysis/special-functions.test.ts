import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import { chiSquareCdf, chiSquareQuantile, chiSquareSf, gammaP, gammaPInv, gammaQ, lnGamma, normalCdf, ONE_SIGMA_CL } from './special-functions.ts';

// Reference: jstat (npm), an independent general-purpose statistics package (references.md).
describe('special functions against jstat', () => {
  it('ln Γ matches jstat.gammaln and exact factorials', () => {
    for (const x of [0.1, 0.5, 1, 1.5, 3, 7.25, 20, 171.5]) expect(Math.abs(lnGamma(x) - jStat.gammaln(x))).toBeLessThan(1e-12 * (1 + Math.abs(lnGamma(x))));
    expect(Math.exp(lnGamma(11))).toBeCloseTo(3628800, 4); // 10! exactly
  });

  it('regularized incomplete gamma P and Q match jstat.lowRegGamma across both algorithms', () => {
    for (const a of [0.5, 1, 2.5, 10, 60]) {
      for (const x of [0.01, 0.3, 1, 3, 9.5, 30, 80]) {
        expect(gammaP(a, x)).toBeCloseTo(jStat.lowRegGamma(a, x), 10);
        expect(gammaP(a, x) + gammaQ(a, x)).toBeCloseTo(1, 14);
      }
    }
  });

  it('chi-square quantiles match jstat.chisquare.inv and invert the cdf', () => {
    for (const k of [1, 2, 3, 10, 50, 400]) {
      for (const p of [0.001, 0.1587, 0.5, 0.8413, 0.99]) {
        const q = chiSquareQuantile(p, k);
        expect(q).toBeCloseTo(jStat.chisquare.inv(p, k), 6);
        expect(chiSquareCdf(q, k)).toBeCloseTo(p, 12);
      }
    }
  });

  it('chi-square survival (the goodness-of-fit p-value) matches 1 − jstat.chisquare.cdf', () => {
    for (const [x, k] of [[3, 2], [195, 200], [250, 200], [4100, 3995]] as const) expect(chiSquareSf(x, k)).toBeCloseTo(1 - jStat.chisquare.cdf(x, k), 9);
  });

  it('gamma quantile matches jstat.gammapinv', () => {
    for (const a of [0.3, 1, 4, 11]) for (const p of [0.01, 0.3, 0.9]) expect(gammaPInv(p, a)).toBeCloseTo(jStat.gammapinv(p, a), 8);
  });

  it('Φ(1) is the one-sided 1σ level 0.8413447460685429 (references.md) and matches jstat.normal', () => {
    expect(ONE_SIGMA_CL).toBeCloseTo(0.8413447460685429, 14);
    for (const z of [-3, -1, 0, 0.5, 2]) expect(normalCdf(z)).toBeCloseTo(jStat.normal.cdf(z, 0, 1), 12);
  });
});
