import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../../simulators/random.ts';
import { ASYMPTOTIC_MU, binDeviance, devianceSf, devianceTermMoments, devianceTermMomentsExact } from './poisson-deviance.ts';
import { chiSquareSf } from './special-functions.ts';

/**
 * The same moments by brute force: every n from 0 to μ + 40√μ + 40 (past any count a Poisson
 * mean this size gives), with probabilities from jstat's ln Γ (npm, independent of our sums and
 * of their normalisation by the summed weight).
 */
function bruteForce(mu: number): { mean: number; variance: number } {
  let s1 = 0;
  let s2 = 0;
  const top = Math.ceil(mu + 40 * Math.sqrt(mu) + 40);
  for (let n = 0; n <= top; n++) {
    const p = Math.exp(n * Math.log(mu) - mu - jStat.gammaln(n + 1));
    const d = binDeviance(n, mu);
    s1 += p * d;
    s2 += p * d * d;
  }
  return { mean: s1, variance: s2 - s1 * s1 };
}

describe("a bin's Baker–Cousins deviance under Poisson counts", () => {
  it('has the summed mean and variance that Monte Carlo draws give, at 0.1 to 100 counts', () => {
    // Outside check: 200,000 seeded Poisson draws per μ. Tolerance 4 standard errors: √(V/R) for
    // the mean, √((m₄ − V²)/R) for the variance (m₄ the draws' fourth central moment).
    const rng = mulberry32(2017);
    const draws = 200_000;
    for (const mu of [0.1, 1, 2, 10, 100]) {
      const d = Float64Array.from({ length: draws }, () => binDeviance(poisson(rng, mu), mu));
      const mean = d.reduce((a, b) => a + b, 0) / draws;
      let m2 = 0;
      let m4 = 0;
      for (const x of d) {
        m2 += (x - mean) ** 2 / draws;
        m4 += (x - mean) ** 4 / draws;
      }
      const exact = devianceTermMomentsExact(mu);
      expect(Math.abs(exact.mean - mean)).toBeLessThan(4 * Math.sqrt(m2 / draws));
      expect(Math.abs(exact.variance - m2)).toBeLessThan(4 * Math.sqrt((m4 - m2 * m2) / draws));
    }
    // …and they are not χ²₁'s 1 and 2 at low counts, which is the point of summing them.
    expect(devianceTermMomentsExact(1).mean).toBeCloseTo(1.1468, 4);
    expect(devianceTermMomentsExact(0.1).mean).toBeCloseTo(0.4741, 4);
  });

  it('loses nothing to where its sums stop', () => {
    for (const mu of [1e-3, 0.1, 1, 7.5, 100, 1000, 5000]) {
      const exact = devianceTermMomentsExact(mu);
      const brute = bruteForce(mu);
      expect(Math.abs(exact.mean - brute.mean)).toBeLessThan(1e-9);
      expect(Math.abs(exact.variance - brute.variance)).toBeLessThan(1e-9);
    }
  });

  it('gives the slope and curvature of its mean, as finite differences confirm', () => {
    for (const mu of [0.01, 0.1, 0.5, 1, 2, 10, 100]) {
      const h = 1e-4 * mu;
      const at = (m: number) => devianceTermMomentsExact(m);
      const slope = (at(mu + h).mean - at(mu - h).mean) / (2 * h);
      const curvature = (at(mu + h).slope - at(mu - h).slope) / (2 * h);
      expect(Math.abs(at(mu).slope - slope)).toBeLessThan(1e-6 * (1 + Math.abs(slope)));
      expect(Math.abs(at(mu).curvature - curvature)).toBeLessThan(1e-6 * (1 + Math.abs(curvature)));
    }
  });

  it("has χ²₁'s mean 1 and variance 2 from ASYMPTOTIC_MU on, and not yet at half of it", () => {
    // The sums approach as 1 + 1/(6μ), 2 + 2/(3μ), slope −1/(6μ²): the rates the tolerances of
    // ASYMPTOTIC_MU's comment come from, checked here rather than taken from a series.
    for (const mu of [ASYMPTOTIC_MU, 5000, 20_000, 100_000]) {
      const m = devianceTermMomentsExact(mu);
      expect(Math.abs(m.mean - 1)).toBeLessThan(1e-4);
      expect(Math.abs(m.variance - 2)).toBeLessThan(4e-4);
      expect(Math.abs(m.slope)).toBeLessThan(1e-7);
      expect(6 * mu * (m.mean - 1)).toBeCloseTo(1, 2);
      expect(1.5 * mu * (m.variance - 2)).toBeCloseTo(1, 2);
      expect(-6 * mu * mu * m.slope).toBeCloseTo(1, 2);
    }
    expect(devianceTermMomentsExact(ASYMPTOTIC_MU / 2).mean - 1).toBeGreaterThan(1e-4);
    expect(devianceTermMoments(ASYMPTOTIC_MU)).toEqual({ mean: 1, variance: 2, slope: 0, curvature: 0 });
  });

  it('interpolates its table to within 1e-6 of the exact mean and 1e-5 of the variance and slope', () => {
    let worst = { mean: 0, variance: 0, slope: 0, curvature: 0 };
    const steps = 5000;
    for (let i = 0; i < steps; i++) {
      // Log-spaced, off the table's nodes, from below its first node to the asymptote.
      const mu = Math.exp(Math.log(0.005) + ((Math.log(ASYMPTOTIC_MU) - Math.log(0.005)) * (i + 0.37)) / steps);
      const a = devianceTermMoments(mu);
      const b = devianceTermMomentsExact(mu);
      worst = {
        mean: Math.max(worst.mean, Math.abs(a.mean - b.mean)),
        variance: Math.max(worst.variance, Math.abs(a.variance - b.variance)),
        slope: Math.max(worst.slope, Math.abs(a.slope - b.slope)),
        curvature: Math.max(worst.curvature, Math.abs(a.curvature - b.curvature) / (1 + Math.abs(b.curvature))),
      };
    }
    expect(worst.mean).toBeLessThan(1e-6);
    expect(worst.variance).toBeLessThan(1e-5);
    expect(worst.slope).toBeLessThan(1e-5);
    expect(worst.curvature).toBeLessThan(1e-5);
  });
});

describe('the deviance read as a scaled χ² by its mean and variance', () => {
  it('is χ²(dof) itself when the mean is the dof and the variance twice it', () => {
    for (const [x, k] of [[3, 2], [195, 200], [250, 200], [4100, 3995]] as const) expect(devianceSf(x, k, 2 * k)).toBe(chiSquareSf(x, k));
  });

  it('is a·χ²_ν with a = variance/(2·mean), ν = 2·mean²/variance (jstat for the χ²)', () => {
    const [mean, variance] = [180.5, 250.3];
    const a = variance / (2 * mean);
    const nu = (2 * mean * mean) / variance;
    for (const x of [150, 180, 220, 260]) expect(devianceSf(x, mean, variance)).toBeCloseTo(1 - jStat.chisquare.cdf(x / a, nu), 9);
  });

  it('gives calibrated p-values for the summed deviance of known means at low counts (Monte Carlo)', () => {
    // 4,000 passes of 200 bins at known means 0.02–1.52 (no fit). The fractions below 0.05 and 0.01
    // must lie within 3 binomial standard deviations of them (0.048 and 0.009 here); χ²(200) is far
    // off (0.001 below 0.05).
    const rng = mulberry32(51);
    const bins = 200;
    const mus = Float64Array.from({ length: bins }, (_, i) => 0.02 + 1.5 * (0.5 + 0.5 * Math.cos((6 * Math.PI * i) / bins)));
    let mean = 0;
    let variance = 0;
    for (const mu of mus) {
      const m = devianceTermMoments(mu);
      mean += m.mean;
      variance += m.variance;
    }
    const runs = 4000;
    let below5 = 0;
    let below1 = 0;
    let chiBelow5 = 0;
    for (let r = 0; r < runs; r++) {
      let dev = 0;
      for (const mu of mus) dev += binDeviance(poisson(rng, mu), mu);
      const p = devianceSf(dev, mean, variance);
      if (p < 0.05) below5++;
      if (p < 0.01) below1++;
      if (chiSquareSf(dev, bins) < 0.05) chiBelow5++;
    }
    const within = (count: number, p: number) => Math.abs(count / runs - p) < 3 * Math.sqrt((p * (1 - p)) / runs);
    expect(within(below5, 0.05)).toBe(true);
    expect(within(below1, 0.01)).toBe(true);
    expect(within(chiBelow5, 0.05)).toBe(false);
  });
});
