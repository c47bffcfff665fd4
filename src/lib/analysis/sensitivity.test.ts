import { describe, expect, it } from 'vitest';
import { mulberry32, poisson } from '../../../simulators/random.ts';
import { quadratureError } from './phase.ts';
import { phaseFisherPerPhoton, phaseNoise, phaseSensitivity, squeezingDb } from './sensitivity.ts';

describe('phase sensitivity', () => {
  // Fisher information per photon V² sin²φ/(1 − V² cos²φ) (computed, references.md).
  it('has Fisher information V² at mid-fringe and 1 at every phase when V = 1', () => {
    expect(phaseFisherPerPhoton(0.9, Math.PI / 2)).toBeCloseTo(0.81, 14);
    for (const phi of [0.1, 1, 2, 3]) expect(phaseFisherPerPhoton(1, phi)).toBeCloseTo(1, 12);
  });

  it('gives squeezing in dB as 8.685889638·r (Caves, Phys. Rev. D 23, 1693 (1981))', () => {
    expect(squeezingDb(1)).toBeCloseTo(8.685889638, 9);
  });

  it('reports ratio and dB against 1/√N and 1/(V√N)', () => {
    const s = phaseSensitivity(0.02, 10_000, 0.5);
    expect(s.shotNoiseLimit).toBeCloseTo(0.01, 14);
    expect(s.visibilityLimit).toBeCloseTo(0.02, 14);
    expect(s.ratio).toBeCloseTo(2, 12);
    expect(s.dB).toBeCloseTo(20 * Math.log10(2), 12);
    expect(s.dBToVisibilityLimit).toBeCloseTo(0, 12);
  });

  it('measures the visibility limit 1/(V√N) at mid-fringe on simulated shot-noise-limited bins', () => {
    const rng = mulberry32(9);
    const N = 2000; // detected photons per bin
    const V = 0.9;
    const cal = { visibility: V, efficiencyRatio: 1 };
    const phases = Float64Array.from({ length: 4000 }, () => {
      const a = poisson(rng, N / 2);
      const b = poisson(rng, N / 2);
      return quadratureError(a, b, cal).value;
    });
    const s = phaseSensitivity(phaseNoise(phases), N, V);
    expect(s.ratioToVisibilityLimit).toBeCloseTo(1, 1);
  });
});
