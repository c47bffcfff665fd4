import { describe, expect, it } from 'vitest';
import { correctRate, rateFromCounts, relativeEfficiency } from './corrections.ts';

describe('rate corrections', () => {
  it('gives a Poisson rate: 10 000 counts in 2 s → 5000 ± 50 /s', () => {
    expect(rateFromCounts(10_000, 2)).toEqual({ value: 5000, err: 50 });
  });

  it('subtracts dark counts with the errors added in quadrature', () => {
    const r = correctRate({ measured: { value: 1000, err: 3 }, dark: { value: 100, err: 4 } });
    expect(r.ok && r.net).toEqual({ value: 900, err: 5 });
  });

  // Order per Ware, Migdall et al., J. Mod. Opt. 54 (2007) (details from memory): dead-time-correct
  // the total first, then subtract the dead-time-corrected dark rate.
  it('corrects dead time before subtracting the (itself corrected) dark rate', () => {
    const tau = 50e-9;
    const r = correctRate({ measured: { value: 2e6, err: 0 }, dark: { value: 500, err: 0 }, deadTime: { tau, model: 'non-paralyzable' } });
    if (!r.ok) throw new Error(r.reason);
    const total = 2e6 / (1 - 2e6 * tau);
    const dark = 500 / (1 - 500 * tau);
    expect(r.net.value).toBeCloseTo(total - dark, 6);
    // Subtracting first and correcting afterwards would give a different (wrong) number.
    expect(Math.abs(r.net.value - (2e6 - 500) / (1 - (2e6 - 500) * tau))).toBeGreaterThan(1);
  });

  it('passes a refusal of the dead-time model through', () => {
    const r = correctRate({ measured: { value: 3e7, err: 0 }, deadTime: { tau: 50e-9, model: 'non-paralyzable' } });
    expect(r.ok).toBe(false);
  });

  it('gives the relative efficiency of the outputs with propagated error', () => {
    const e = relativeEfficiency({ value: 1000, err: 10 }, { value: 900, err: 9 });
    expect(e.value).toBeCloseTo(0.9, 12);
    expect(e.err).toBeCloseTo(0.9 * Math.hypot(0.01, 0.01), 12);
  });
});
