import { describe, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../../simulators/random.ts';
import { allanAt, allanDeviation } from './allan.ts';

// Riley, Handbook of Frequency Stability Analysis, NIST SP 1065 (2008), sec. 12.3 test data.
const NIST = [892, 809, 823, 798, 671, 644, 883, 903, 677];

describe('Allan deviation (NIST SP 1065)', () => {
  it('reproduces the NIST SP 1065 test values: 91.22945 (τ=1), 115.8082 (τ=2 non-overlapping), 85.95287 (τ=2 overlapping)', () => {
    expect(allanAt(NIST, 1, 1, false)?.adev).toBeCloseTo(91.22945, 4);
    expect(allanAt(NIST, 1, 1, true)?.adev).toBeCloseTo(91.22945, 4);
    expect(allanAt(NIST, 1, 2, false)?.adev).toBeCloseTo(115.8082, 3);
    expect(allanAt(NIST, 1, 2, true)?.adev).toBeCloseTo(85.95287, 4);
  });

  it('returns τ = τ₀·2^k while the series supports it', () => {
    expect(allanDeviation(NIST, 0.5).map((p) => p.tau)).toEqual([0.5, 1, 2]);
  });

  // For Poisson counts the Allan variance of counts per bin equals the mean, so a rate R has
  // σ(τ) = √(R/τ): the white-noise τ^(−1/2) slope (computed, references.md).
  it('gives √(R/τ) and the τ^(−1/2) slope for Poisson counts', () => {
    const rng = mulberry32(8);
    const rate = 5000; // counts/s
    const tau0 = 0.01; // s
    const rates = Float64Array.from({ length: 2 ** 15 }, () => poisson(rng, rate * tau0) / tau0);
    const points = allanDeviation(rates, tau0).filter((p) => p.terms >= 64);
    for (const p of points) {
      // About N/m independent averages at τ = m·τ₀: allow 3 of their relative spread.
      const independent = rates.length / (p.tau / tau0);
      expect(Math.abs(p.adev / Math.sqrt(rate / p.tau) - 1)).toBeLessThan(3 / Math.sqrt(independent));
    }
    // Least-squares slope of log σ against log τ.
    const lx = points.map((p) => Math.log(p.tau));
    const ly = points.map((p) => Math.log(p.adev));
    const mx = lx.reduce((a, b) => a + b) / lx.length;
    const my = ly.reduce((a, b) => a + b) / ly.length;
    const slope = lx.reduce((s, x, i) => s + (x - mx) * ((ly[i] as number) - my), 0) / lx.reduce((s, x) => s + (x - mx) ** 2, 0);
    expect(slope).toBeCloseTo(-0.5, 1);
  });
});
