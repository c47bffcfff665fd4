import { describe, expect, it } from 'vitest';
import { binomial, gaussian, mulberry32, poisson } from './random.ts';

/** Pearson χ² of `draws` samples against a pmf, pooling cells with fewer than 5 expected. */
function chiSquare(sample: () => number, pmf: (k: number) => number, kMax: number, draws: number): { chi2: number; df: number } {
  const observed = new Array<number>(kMax + 1).fill(0);
  for (let i = 0; i < draws; i++) {
    const k = sample();
    observed[Math.min(k, kMax)]! += 1;
  }
  let chi2 = 0;
  let cells = 0;
  let pooledObs = 0;
  let pooledExp = 0;
  let tail = 1;
  for (let k = 0; k <= kMax; k++) {
    // The last cell takes the whole upper tail so the expectations sum to `draws`.
    const p = k === kMax ? tail : pmf(k);
    tail -= p;
    pooledObs += observed[k]!;
    pooledExp += p * draws;
    if (pooledExp >= 5 || k === kMax) {
      if (pooledExp > 0) {
        chi2 += (pooledObs - pooledExp) ** 2 / pooledExp;
        cells++;
      }
      pooledObs = 0;
      pooledExp = 0;
    }
  }
  return { chi2, df: cells - 1 };
}

/**
 * Exact binomial pmf by the ratio f(k)/f(k−1) = (n−k+1)p/(k(1−p)), walked out from the mode and
 * normalised (so (1−p)ⁿ cannot underflow); independent of the generator's code.
 */
function binomialPmf(n: number, p: number): (k: number) => number {
  const table = new Array<number>(n + 1).fill(0);
  const mode = Math.floor((n + 1) * p);
  table[mode] = 1;
  for (let k = mode + 1; k <= n; k++) table[k] = (table[k - 1]! * (n - k + 1) * p) / (k * (1 - p));
  for (let k = mode - 1; k >= 0; k--) table[k] = (table[k + 1]! * (k + 1) * (1 - p)) / ((n - k) * p);
  const sum = table.reduce((s, f) => s + f, 0);
  return (k) => (table[k] ?? 0) / sum;
}

function poissonPmf(mean: number): (k: number) => number {
  return (k) => {
    let f = Math.exp(-mean);
    for (let i = 1; i <= k; i++) f *= mean / i;
    return f;
  };
}

// χ² of df degrees of freedom exceeds df + 6·√(2df) with probability well below 1e-4.
const bound = (df: number): number => df + 6 * Math.sqrt(2 * df);

describe('random deviates', () => {
  it('mulberry32 repeats from a seed and stays in [0, 1)', () => {
    const a = mulberry32(42);
    const b = mulberry32(42);
    for (let i = 0; i < 1000; i++) {
      const u = a();
      expect(u).toBe(b());
      expect(u).toBeGreaterThanOrEqual(0);
      expect(u).toBeLessThan(1);
    }
  });

  it.each([
    [30, 0.1, 'inversion'],
    [100, 0.3, 'BTRS'],
    [1000, 0.7, 'BTRS on 1 − p'],
    [5000, 0.001, 'inversion, large n'],
  ])('binomial(%i, %f) follows the exact pmf (%s)', (n, p) => {
    const rng = mulberry32(7);
    const { chi2, df } = chiSquare(() => binomial(rng, n, p), binomialPmf(n, p), n, 40_000);
    expect(df).toBeGreaterThan(3);
    expect(chi2).toBeLessThan(bound(df));
  });

  it('binomial keeps mean and variance at n = 10⁶', () => {
    const rng = mulberry32(3);
    const n = 1e6;
    const p = 0.25;
    const draws = 20_000;
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < draws; i++) {
      const k = binomial(rng, n, p);
      s += k;
      s2 += k * k;
    }
    const mean = s / draws;
    const variance = s2 / draws - mean * mean;
    const v = n * p * (1 - p);
    expect(Math.abs(mean - n * p)).toBeLessThan(5 * Math.sqrt(v / draws));
    expect(Math.abs(variance / v - 1)).toBeLessThan(0.05);
  });

  it('binomial edge cases', () => {
    const rng = mulberry32(1);
    expect(binomial(rng, 0, 0.5)).toBe(0);
    expect(binomial(rng, 10, 0)).toBe(0);
    expect(binomial(rng, 10, 1)).toBe(10);
  });

  it.each([[4], [12], [80]])('poisson(%f) follows the exact pmf', (mean) => {
    const rng = mulberry32(11);
    const kMax = Math.ceil(mean + 8 * Math.sqrt(mean) + 10);
    const { chi2, df } = chiSquare(() => poisson(rng, mean), poissonPmf(mean), kMax, 40_000);
    expect(chi2).toBeLessThan(bound(df));
  });

  it('gaussian has zero mean and unit variance', () => {
    const rng = mulberry32(5);
    const draws = 50_000;
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < draws; i++) {
      const g = gaussian(rng);
      s += g;
      s2 += g * g;
    }
    expect(Math.abs(s / draws)).toBeLessThan(5 / Math.sqrt(draws));
    expect(Math.abs(s2 / draws - 1)).toBeLessThan(0.03);
  });
});
