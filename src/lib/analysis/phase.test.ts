import { describe, expect, it } from 'vitest';
import { gaussian, mulberry32, poisson } from '../../../simulators/random.ts';
import { expectedCounts } from './fringe-model.ts';
import { driftRate, normalizedDifference, phaseAtHold, quadratureError, unfoldPhase, unwrapPhase } from './phase.ts';

const params = (theta: number, V = 0.9) => ({ amplitudeA: 5000, amplitudeB: 4000, visibility: V, period: 1, phase: theta, quadratic: 0 });

describe('phase at hold', () => {
  it('normalized difference is V·cos θ once efficiencies and dark counts are taken out', () => {
    for (const theta of [0, 0.4, 1.5, 2.9]) {
      const m = expectedCounts(0, params(theta), 30, 20);
      const d = normalizedDifference(m.a, m.b, { visibility: 0.9, efficiencyRatio: 0.8, darkA: 30, darkB: 20 });
      expect(d.value).toBeCloseTo(0.9 * Math.cos(theta), 12);
    }
  });

  it('recovers θ from simulated counts with an error that matches the scatter', () => {
    const rng = mulberry32(12);
    const theta = 1.1;
    const m = expectedCounts(0, params(theta), 0, 0);
    const cal = { visibility: 0.9, efficiencyRatio: 0.8 };
    const est = Array.from({ length: 2000 }, () => phaseAtHold(poisson(rng, m.a), poisson(rng, m.b), cal));
    const mean = est.reduce((s, e) => s + e.value, 0) / est.length;
    const sd = Math.sqrt(est.reduce((s, e) => s + (e.value - mean) ** 2, 0) / (est.length - 1));
    expect(Math.abs(mean - theta)).toBeLessThan((4 * sd) / Math.sqrt(est.length));
    expect((est[0] as { err: number }).err / sd).toBeCloseTo(1, 1);
  });

  it('gives a quadrature error signal that is zero at mid-fringe and equal to the offset near it', () => {
    const cal = { visibility: 0.9, efficiencyRatio: 0.8 };
    const at = (theta: number, slope: 1 | -1) => {
      const m = expectedCounts(0, params(theta), 0, 0);
      return quadratureError(m.a, m.b, cal, slope).value;
    };
    expect(at(Math.PI / 2, 1)).toBeCloseTo(0, 12);
    expect(at(Math.PI / 2 + 0.05, 1)).toBeCloseTo(0.05, 12);
    expect(at(-Math.PI / 2 + 0.05, -1)).toBeCloseTo(0.05, 12);
  });
});

describe('phase drift', () => {
  it('unwraps 2π jumps', () => {
    const truth = Array.from({ length: 200 }, (_, i) => 0.1 * i - 3);
    const wrapped = truth.map((t) => Math.atan2(Math.sin(t), Math.cos(t)));
    const un = unwrapPhase(wrapped);
    truth.forEach((t, i) => expect(un[i]).toBeCloseTo(t, 10));
  });

  it('unfolds an arccos phase through the fringe extremes for a steady drift, and finds its rate', () => {
    const rng = mulberry32(13);
    const times = Array.from({ length: 600 }, (_, i) => i * 0.1); // s
    const rate = 0.3; // rad/s: crosses 0 and π several times
    const truth = times.map((t) => 0.5 + rate * t);
    const folded = truth.map((p) => Math.acos(Math.max(-1, Math.min(1, Math.cos(p) + 0.01 * gaussian(rng)))));
    const un = unfoldPhase(folded);
    const d = driftRate(times, un);
    expect(Math.abs(d.value - rate)).toBeLessThan(0.01);
    expect(Math.abs((un.at(-1) as number) - (truth.at(-1) as number))).toBeLessThan(0.3);
  });

  it('keeps a real reversal away from the fringe extremes', () => {
    const truth = Array.from({ length: 200 }, (_, i) => (i < 100 ? 0.5 + 0.015 * i : 2 - 0.012 * (i - 100)));
    const un = unfoldPhase(truth.map((p) => Math.acos(Math.cos(p))));
    truth.forEach((t, i) => expect(un[i]).toBeCloseTo(t, 10));
  });

  it('gives the drift rate with an error from the residual scatter', () => {
    const rng = mulberry32(14);
    const t = Array.from({ length: 100 }, (_, i) => i);
    const p = t.map((x) => 0.02 * x + 0.1 * gaussian(rng));
    const d = driftRate(t, p);
    expect(Math.abs(d.value - 0.02)).toBeLessThan(3 * d.err);
    expect(d.err).toBeCloseTo(0.1 / Math.sqrt(t.reduce((s, x) => s + (x - 49.5) ** 2, 0)), 3);
  });
});
