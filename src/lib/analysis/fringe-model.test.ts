import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { expectedCounts, outputProbabilities } from './fringe-model.ts';

// Gerry & Knight, Introductory Quantum Optics (CUP 2005), ch. 6: a lossless balanced
// interferometer has P₁ = cos²(δ/2), P₂ = sin²(δ/2).
describe('two-output interferometer model (Gerry & Knight, ch. 6)', () => {
  it('output probabilities sum to 1 for every phase difference', () => {
    fc.assert(fc.property(fc.double({ min: -100, max: 100, noNaN: true }), (d) => {
      const p = outputProbabilities(d);
      expect(p.a + p.b).toBeCloseTo(1, 14);
    }));
  });

  it('sends all light to one output at δ = 0 and to the other at δ = π', () => {
    expect(outputProbabilities(0)).toEqual({ a: 1, b: 0 });
    expect(outputProbabilities(Math.PI).a).toBeCloseTo(0, 15);
  });

  it('matches N₁,₂ = (N/2)(1 ± V cos δ) for the fitted model with V = 1 and no dark counts', () => {
    const N = 1000;
    fc.assert(fc.property(fc.double({ min: -10, max: 10, noNaN: true }), (x) => {
      const m = expectedCounts(x, { amplitudeA: N / 2, amplitudeB: N / 2, visibility: 1, period: 1, phase: 0, quadratic: 0 });
      const p = outputProbabilities(2 * Math.PI * x);
      expect(m.a).toBeCloseTo(N * p.a, 9);
      expect(m.b).toBeCloseTo(N * p.b, 9);
    }));
  });
});
