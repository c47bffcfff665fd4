import { describe, expect, it } from 'vitest';
import { gaussian, mulberry32, poisson } from '../../../simulators/random.ts';
import { allanAt, allanDeviation, MIN_EDF, whiteFmEdf, whiteNoiseFloor } from './allan.ts';

// Riley, Handbook of Frequency Stability Analysis, NIST SP 1065 (2008), sec. 12.3 test data.
const NIST = [892, 809, 823, 798, 671, 644, 883, 903, 677];

describe('Allan deviation (NIST SP 1065)', () => {
  it('reproduces the NIST SP 1065 test values: 91.22945 (τ=1), 115.8082 (τ=2 non-overlapping), 85.95287 (τ=2 overlapping)', () => {
    expect(allanAt([NIST], 1, 1, false)?.adev).toBeCloseTo(91.22945, 4);
    expect(allanAt([NIST], 1, 1, true)?.adev).toBeCloseTo(91.22945, 4);
    expect(allanAt([NIST], 1, 2, false)?.adev).toBeCloseTo(115.8082, 3);
    expect(allanAt([NIST], 1, 2, true)?.adev).toBeCloseTo(85.95287, 4);
  });

  it('returns τ = τ₀·2^k while the series holds MIN_EDF degrees of freedom (not τ = T/2, edf ≈ 1)', () => {
    expect(allanAt([NIST], 0.5, 4)!.edf).toBeLessThan(MIN_EDF);
    expect(allanDeviation([NIST], 0.5).map((p) => p.tau)).toEqual([0.5, 1]);
  });

  // For Poisson counts the Allan variance of counts per bin equals the mean, so a rate R has
  // σ(τ) = √(R/τ): the white-noise τ^(−1/2) slope (computed, references.md).
  it('gives √(R/τ) and the τ^(−1/2) slope for Poisson counts', () => {
    const rng = mulberry32(8);
    const rate = 5000; // counts/s
    const tau0 = 0.01; // s
    const rates = Float64Array.from({ length: 2 ** 15 }, () => poisson(rng, rate * tau0) / tau0);
    const points = allanDeviation([rates], tau0).filter((p) => p.edf >= 20);
    for (const p of points) expect(Math.abs(p.adev / Math.sqrt(rate / p.tau) - 1)).toBeLessThan(3 * (p.err / p.adev));
    // Least-squares slope of log σ against log τ.
    const lx = points.map((p) => Math.log(p.tau));
    const ly = points.map((p) => Math.log(p.adev));
    const mx = lx.reduce((a, b) => a + b) / lx.length;
    const my = ly.reduce((a, b) => a + b) / ly.length;
    const slope = lx.reduce((s, x, i) => s + (x - mx) * ((ly[i] as number) - my), 0) / lx.reduce((s, x) => s + (x - mx) ** 2, 0);
    expect(slope).toBeCloseTo(-0.5, 1);
  });
});

describe('error bars from the equivalent degrees of freedom', () => {
  // Exact edf of the overlapping estimator for white FM, computed from the definition (an
  // independent check of the Howe–Allan–Barnes approximation): the second differences d_i of M
  // white values with unit variance have covariance c(k) = 2·o(k) − o(k − m) − o(k + m), o(s) =
  // max(0, m − |s|), so for K = M − 2m + 1 terms edf = 2E²/Var = K²c(0)²/Σ_ij c(i − j)².
  function exactWhiteFmEdf(values: number, m: number): number {
    const k = values - 2 * m + 1;
    const o = (s: number) => Math.max(0, m - Math.abs(s));
    const c = (lag: number) => 2 * o(lag) - o(lag - m) - o(lag + m);
    let sumSq = k * c(0) ** 2;
    for (let lag = 1; lag < k; lag++) sumSq += 2 * (k - lag) * c(lag) ** 2;
    return (k * k * c(0) ** 2) / sumSq;
  }

  it('matches the exact white-FM edf within 3% (M ≥ 64, edf ≥ MIN_EDF) and far below the number of terms at long τ', () => {
    for (const values of [64, 1024, 2000]) {
      for (let m = 1; 2 * m <= values; m *= 2) {
        const edf = whiteFmEdf(values + 1, m);
        if (edf >= MIN_EDF) expect(Math.abs(edf / exactWhiteFmEdf(values, m) - 1)).toBeLessThan(0.03);
      }
    }
    // At m = N/4 of 1024 values: 513 terms but about 4 degrees of freedom.
    const p = allanAt([new Float64Array(1024).map((_, i) => i % 3)], 1, 256)!;
    expect(p.terms).toBe(513);
    expect(p.edf).toBeCloseTo(4, 1);
  });

  // Monte Carlo calibration (common practice): over many seeded white-noise series the spread of
  // the estimates must match the error each reports, and the 68.27% interval must hold the true σ
  // (here 1 per bin, σ(τ) = 1/√τ) about 68% of the time. 1000 series of 1024 values: the spread is
  // known to about 2.5% and the coverage to about 1.5%, so the tolerances are about 4 of those.
  it('reports an error that matches the actual spread of white-noise estimates', () => {
    const rng = mulberry32(1065);
    const runs = 1000;
    const byTau = new Map<number, { adev: number[]; err: number[]; covered: number }>();
    for (let r = 0; r < runs; r++) {
      const y = Float64Array.from({ length: 1024 }, () => gaussian(rng));
      for (const p of allanDeviation([y], 1)) {
        const s = byTau.get(p.tau) ?? { adev: [], err: [], covered: 0 };
        s.adev.push(p.adev);
        s.err.push(p.err);
        if (p.lo <= 1 / Math.sqrt(p.tau) && 1 / Math.sqrt(p.tau) <= p.hi) s.covered++;
        byTau.set(p.tau, s);
      }
    }
    expect([...byTau.keys()]).toEqual([1, 2, 4, 8, 16, 32, 64, 128, 256]);
    for (const s of byTau.values()) {
      const mean = s.adev.reduce((a, b) => a + b) / runs;
      const spread = Math.sqrt(s.adev.reduce((a, b) => a + (b - mean) ** 2, 0) / (runs - 1));
      const meanErr = s.err.reduce((a, b) => a + b) / runs;
      expect(Math.abs(spread / meanErr - 1)).toBeLessThan(0.1);
      // At edf ≈ 4 (τ = 256) the estimator's distribution is less skewed than the χ² of the same
      // variance and the interval errs wide (75% here): never narrow, at most 0.1 wide.
      expect(s.covered / runs - 0.6827).toBeGreaterThan(-0.06);
      expect(s.covered / runs - 0.6827).toBeLessThan(0.1);
    }
  });
});

describe('gaps', () => {
  it('never differences across a gap: a level step between two stretches leaves white noise white', () => {
    const rng = mulberry32(3);
    const first = Array.from({ length: 512 }, () => gaussian(rng));
    const second = Array.from({ length: 512 }, () => 50 + gaussian(rng));
    const apart = allanDeviation([first, second], 1);
    const joined = allanDeviation([[...first, ...second]], 1);
    for (const p of apart) expect(Math.abs(p.adev * Math.sqrt(p.tau) - 1)).toBeLessThan(4 * p.err * Math.sqrt(p.tau));
    // Joined, the step dominates at long τ.
    expect(joined.at(-1)!.adev).toBeGreaterThan(10 * apart.at(-1)!.adev);
    // Two independent stretches add their degrees of freedom.
    expect(apart[0]!.edf).toBeCloseTo(2 * whiteFmEdf(513, 1), 6);
  });
});

describe('the white-noise floor from each value’s variance', () => {
  it('is √(v/m) for one variance v throughout, and null where no term fits', () => {
    const v = [Float64Array.from({ length: 100 }, () => 4), Float64Array.from({ length: 7 }, () => 4)];
    for (const m of [1, 2, 4, 32]) expect(whiteNoiseFloor(v, m)).toBeCloseTo(Math.sqrt(4 / m), 12);
    expect(whiteNoiseFloor(v, 51)).toBeNull();
  });

  // Poisson counts n at rate R in bins τ₀: variance = mean, so a rate n/τ₀ has variance R/τ₀ and
  // σ(τ) = √(R/τ) (white FM: the Allan variance is the variance of the τ-averages, NIST SP 1065).
  // Two holds at different rates, taken as separate stretches: the measured Allan deviation sits on
  // the floor of the rates' counting noise, √(((R₁ + R₂)/2)/τ) for stretches of equal length.
  it('is what Poisson counts at two different steady rates give', () => {
    const rng = mulberry32(21);
    const tau0 = 0.01;
    const rates = [2_000, 8_000]; // counts/s
    const stretches = rates.map((r) => Float64Array.from({ length: 2 ** 14 }, () => poisson(rng, r * tau0) / tau0));
    const variances = stretches.map((s) => s.map((y) => y / tau0));
    for (const p of allanDeviation(stretches, tau0).filter((q) => q.edf >= 20)) {
      const floor = whiteNoiseFloor(variances, Math.round(p.tau / tau0))!;
      expect(Math.abs(floor / Math.sqrt(5_000 / p.tau) - 1)).toBeLessThan(0.02);
      expect(Math.abs(p.adev / floor - 1)).toBeLessThan(3 * (p.err / p.adev));
    }
  });
});
