import { lambertW0 as referenceW0 } from 'lambert-w-function';
import { describe, expect, it } from 'vitest';
import { correctDeadTime, countsBeforeDeadTime, countsThroughDeadTime } from './dead-time.ts';

const TAU = 50e-9; // s: a Si SPAD's dead time (20–50 ns, common practice)

describe('dead-time correction (Knoll, Radiation Detection and Measurement, 4th ed., ch. 4)', () => {
  // Worked example computed from Knoll's forward models: a true rate n = 1.0e6 /s with τ = 50 ns is
  // measured as m = n/(1 + nτ) = 952 380.95 /s (non-paralyzable) or m = n·e^(−nτ) = 951 229.42 /s
  // (paralyzable); correcting those measured rates must give back 1.0e6 /s.
  it('inverts the non-paralyzable model: m = 952 380.95 /s → n = 1.0e6 /s', () => {
    const r = correctDeadTime({ value: 952_380.952_380_95, err: 0 }, TAU, 'non-paralyzable');
    expect(r.ok && r.rate.value).toBeCloseTo(1e6, 3);
    expect(r.ok && r.lossFraction).toBeCloseTo(0.047619, 5); // 1 − m/n = nτ/(1 + nτ)
  });

  it('inverts the paralyzable model through W₀: m = 951 229.42 /s → n = 1.0e6 /s', () => {
    const m = 1e6 * Math.exp(-0.05);
    const r = correctDeadTime({ value: m, err: 0 }, TAU, 'paralyzable');
    expect(r.ok && r.rate.value).toBeCloseTo(1e6, 3);
    // Independent W₀ from the lambert-w-function package (npm).
    expect(r.ok && r.rate.value).toBeCloseTo(-referenceW0(-m * TAU) / TAU, 3);
  });

  it('agrees between models at low rates, n ≈ m(1 + mτ) (Knoll: both reduce to this)', () => {
    const m = 1e4;
    const a = correctDeadTime({ value: m, err: 100 }, TAU, 'non-paralyzable');
    const b = correctDeadTime({ value: m, err: 100 }, TAU, 'paralyzable');
    expect(a.ok && b.ok).toBe(true);
    if (a.ok && b.ok) {
      // Agreement to second order in mτ = 5e-4.
      expect(a.rate.value / (m * (1 + m * TAU))).toBeCloseTo(1, 5);
      expect(b.rate.value / (m * (1 + m * TAU))).toBeCloseTo(1, 5);
    }
  });

  it('propagates the uncertainty of m by the derivative of the inversion (checked numerically)', () => {
    for (const model of ['non-paralyzable', 'paralyzable'] as const) {
      const m = 4e6;
      const h = 1;
      const r = correctDeadTime({ value: m, err: 2000 }, TAU, model);
      const up = correctDeadTime({ value: m + h, err: 0 }, TAU, model);
      const dn = correctDeadTime({ value: m - h, err: 0 }, TAU, model);
      if (!r.ok || !up.ok || !dn.ok) throw new Error('unexpected refusal');
      expect(r.rate.err / (((up.rate.value - dn.rate.value) / (2 * h)) * 2000)).toBeCloseTo(1, 5);
    }
  });

  it('warns above 10% loss (mτ ≳ 0.09, common practice)', () => {
    // Non-paralyzable loss 1 − m/n equals mτ exactly; paralyzable reaches 10% at mτ ≈ 0.095.
    const low = correctDeadTime({ value: 0.08 / TAU, err: 0 }, TAU, 'non-paralyzable');
    const high = correctDeadTime({ value: 0.11 / TAU, err: 0 }, TAU, 'non-paralyzable');
    const para = correctDeadTime({ value: 0.097 / TAU, err: 0 }, TAU, 'paralyzable');
    expect(para.ok && para.warnings.length).toBe(1);
    expect(low.ok && low.warnings).toEqual([]);
    expect(high.ok && high.warnings.length).toBe(1);
  });

  it('refuses where the model has no meaning: mτ ≥ 1 (non-paralyzable), mτ > 1/e (paralyzable)', () => {
    const a = correctDeadTime({ value: 1 / TAU, err: 0 }, TAU, 'non-paralyzable');
    const b = correctDeadTime({ value: 0.37 / TAU, err: 0 }, TAU, 'paralyzable');
    expect(a.ok).toBe(false);
    expect(b.ok).toBe(false);
    if (!b.ok) expect(b.reason).toMatch(/1\/e/);
    expect(correctDeadTime({ value: 0.36 / TAU, err: 0 }, TAU, 'paralyzable').ok).toBe(true);
  });
});

describe('counts through a dead time (the forward model a fit curve is drawn with)', () => {
  it('is undone by the correction, for both models (Knoll, ch. 4: m = n/(1 + nτ), m = n·e^(−nτ))', () => {
    const tau = 1e-7;
    for (const model of ['non-paralyzable', 'paralyzable'] as const) {
      for (const n of [1e3, 1e5, 2e6]) {
        const m = countsThroughDeadTime(n, tau, model);
        const back = correctDeadTime({ value: m, err: 0 }, tau, model);
        expect(back.ok && back.rate.value).toBeCloseTo(n, 6);
        // The same over an interval of counts: 0.5 s of them, recorded and restored.
        expect(countsBeforeDeadTime(countsThroughDeadTime(n * 0.5, tau / 0.5, model), 0.5, tau, model)).toBeCloseTo(n * 0.5, 4);
      }
    }
    // Past a paralyzable detector's maximum there is no true rate: the counts stay as recorded.
    expect(countsBeforeDeadTime(1e7, 1, 1e-7, 'paralyzable')).toBe(1e7);
  });
});
