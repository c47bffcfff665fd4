import { describe, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../../simulators/random.ts';
import { expectedCounts } from './fringe-model.ts';
import { envelopeVisibility, runningVisibility, visibilityTrend } from './running-visibility.ts';

describe('envelope visibility while the phase drifts', () => {
  // Low counts: ~6 photons per bin over both outputs, the phase drifting through many fringes.
  const simulate = (seed: number) => {
    const rng = mulberry32(seed);
    const n = 20_000;
    const a = new Float64Array(n);
    const b = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const m = expectedCounts(i * 0.0137, { amplitudeA: 3, amplitudeB: 2.4, visibility: 0.8, period: 1, phase: 0, quadratic: 0 }, 0.2, 0.1);
      a[i] = poisson(rng, m.a);
      b[i] = poisson(rng, m.b);
    }
    return { a, b };
  };

  /** 1,000 bins of two outputs ∝ 1 ± 0.9 cos θ (common practice), 500 counts each on average, θ(fraction of the window). */
  const drifting = (seed: number, theta: (f: number) => number) => {
    const rng = mulberry32(seed);
    const a = new Float64Array(1_000);
    const b = new Float64Array(1_000);
    for (let i = 0; i < 1_000; i++) {
      const c = Math.cos(theta(i / 1_000));
      a[i] = poisson(rng, 500 * (1 + 0.9 * c));
      b[i] = poisson(rng, 500 * (1 - 0.9 * c));
    }
    return { a, b };
  };

  it('is unbiased at low counts once the shot-noise term is subtracted', () => {
    const { a, b } = simulate(21);
    const e = envelopeVisibility(a, b, { efficiencyRatio: 0.8, darkA: 0.2, darkB: 0.1 });
    if (!e) throw new Error('no estimate');
    expect(Math.abs(e.value - 0.8)).toBeLessThan(3 * e.err);
    expect(e.warnings).toEqual([]);
    // The same estimator without the Poisson term is biased far beyond that error.
    let num = 0;
    let den = 0;
    for (let i = 0; i < a.length; i++) {
      const x = (a[i] as number) - 0.2;
      const y = ((b[i] as number) - 0.1) / 0.8;
      num += 2 * (x - y) ** 2;
      den += (x + y) ** 2;
    }
    expect(Math.sqrt(num / den) - 0.8).toBeGreaterThan(10 * e.err);
  });

  it('warns when the phase drifted through only a slice of a fringe around mid-fringe', () => {
    // A slow drift of ±0.6 rad about mid-fringe: half the bins on each side, yet the spread of the
    // outputs is the slice's (two outputs ∝ 1 ± V cos θ, common practice), far below V = 0.9.
    const { a, b } = drifting(22, (f) => Math.PI / 2 - 0.6 + 1.2 * f);
    const e = envelopeVisibility(a, b, { efficiencyRatio: 1 });
    expect(e!.value).toBeLessThan(0.5);
    expect(e!.warnings).toHaveLength(1);
    expect(e!.warnings[0]).toMatch(/whole fringe/);
  });

  it('warns when the phase holds still at mid-fringe: the spread is shot noise, not a fringe', () => {
    const rng = mulberry32(24);
    const a = Float64Array.from({ length: 1_000 }, () => poisson(rng, 50));
    const b = Float64Array.from({ length: 1_000 }, () => poisson(rng, 50));
    expect(envelopeVisibility(a, b, { efficiencyRatio: 1 })?.warnings[0]).toMatch(/whole fringe/);
  });

  it('takes a window whose phase drifted just over one fringe, at high counts', () => {
    const { a, b } = drifting(23, (f) => 0.3 + 2.2 * Math.PI * f);
    expect(envelopeVisibility(a, b, { efficiencyRatio: 1 })?.warnings).toEqual([]);
  });

  it('warns when the window did not sample the fringe evenly', () => {
    const a = new Float64Array(100).fill(90);
    const b = new Float64Array(100).fill(10);
    expect(envelopeVisibility(a, b, { efficiencyRatio: 1 })?.warnings.length).toBe(1);
  });
});

describe('running visibility and trend', () => {
  it('combines the latest fits by inverse variance', () => {
    const r = runningVisibility([
      { timeMs: 0, value: 0.5, err: 0.01 },
      { timeMs: 1000, value: 0.9, err: 0.01 },
      { timeMs: 2000, value: 0.92, err: 0.02 },
    ], 2);
    expect(r?.n).toBe(2);
    expect(r?.value).toBeCloseTo((0.9 / 1e-4 + 0.92 / 4e-4) / (1 / 1e-4 + 1 / 4e-4), 12);
  });

  it('inflates the error when the fits scatter more than their errors allow', () => {
    const r = runningVisibility([
      { timeMs: 0, value: 0.8, err: 0.001 },
      { timeMs: 1, value: 0.9, err: 0.001 },
    ]);
    expect(r?.err).toBeGreaterThan(0.01);
  });

  it('finds the drift of a trend in visibility per hour', () => {
    const points = Array.from({ length: 30 }, (_, i) => ({ timeMs: i * 60_000, value: 0.95 - 0.01 * (i / 60), err: 0.001 }));
    const t = visibilityTrend(points);
    expect(t.slopePerHour?.value).toBeCloseTo(-0.01, 8);
  });
});
