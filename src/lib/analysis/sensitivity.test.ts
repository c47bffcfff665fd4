import { describe, expect, it } from 'vitest';
import { gaussian, mulberry32, poisson } from '../../../simulators/random.ts';
import { quadratureError } from './phase.ts';
import { phaseFisherPerPhoton, phaseFloor, phaseSensitivity, squeezingDb, type NoiseSegment } from './sensitivity.ts';
import { lnGamma } from './special-functions.ts';

/** Sample standard deviation (n − 1). */
function sd(xs: readonly number[]): number {
  const m = xs.reduce((a, b) => a + b, 0) / xs.length;
  return Math.sqrt(xs.reduce((a, x) => a + (x - m) ** 2, 0) / (xs.length - 1));
}

/** Per-bin quadrature errors of Poisson counts with means `a` and `b` (output b's efficiency η_b/η_a = `eta`). */
function readings(rng: () => number, bins: number, a: number, b: number, visibility: number, eta: number): Float64Array {
  return Float64Array.from({ length: bins }, () => quadratureError(poisson(rng, a), poisson(rng, b), { visibility, efficiencyRatio: eta }).value);
}

describe('phase sensitivity', () => {
  // Fisher information per photon V² sin²φ/(1 − V² cos²φ) (computed, references.md).
  it('has Fisher information V² at mid-fringe and 1 at every phase when V = 1', () => {
    expect(phaseFisherPerPhoton(0.9, Math.PI / 2)).toBeCloseTo(0.81, 14);
    for (const phi of [0.1, 1, 2, 3]) expect(phaseFisherPerPhoton(1, phi)).toBeCloseTo(1, 12);
  });

  it('gives squeezing in dB as 8.685889638·r (Caves, Phys. Rev. D 23, 1693 (1981))', () => {
    expect(squeezingDb(1)).toBeCloseTo(8.685889638, 9);
  });
});

describe('phase floor at an operating point', () => {
  // Outputs N₁,₂ = (N/2)(1 ± V cos φ) (Gerry & Knight, Introductory Quantum Optics, ch. 6). Error
  // propagation Δφ = ΔD/|∂⟨D⟩/∂φ| (the method-of-moments bound of quantum interferometry, e.g.
  // Pezzè et al., Rev. Mod. Phys. 90, 035005 (2018), sec. II; section from memory) with D = (N₁ − N₂)/N,
  // ⟨D⟩ = V cos φ and the binomial ΔD² = 4N₁N₂/N³ gives, in the outputs' counts,
  // Δφ² = 4N₁N₂ / (N·(V²N² − (N₁ − N₂)²)).
  it('equals the error-propagation variance of two outputs with equal efficiencies, at and away from mid-fringe', () => {
    const N = 2440; // photons per 10 ms bin on the 633 nm demo bench
    for (const V of [0.5, 0.8, 0.985, 1]) {
      for (const phi of [Math.PI / 2, Math.PI / 2 + 0.25, Math.PI / 2 - 0.5, 1]) {
        const n1 = (N / 2) * (1 + V * Math.cos(phi));
        const n2 = (N / 2) * (1 - V * Math.cos(phi));
        const published = Math.sqrt((4 * n1 * n2) / (N * (V * V * N * N - (n1 - n2) ** 2)));
        expect(phaseFloor(n1, n2, V, phi)).toBeCloseTo(published, 12);
        expect(phaseFloor(n1, n2, V, phi)).toBeCloseTo(1 / Math.sqrt(N * phaseFisherPerPhoton(V, phi)), 12);
      }
      // 1/(V√N) at mid-fringe.
      expect(phaseFloor(N / 2, N / 2, V, Math.PI / 2)).toBeCloseTo(1 / (V * Math.sqrt(N)), 12);
    }
    // Away from mid-fringe the floor rises above 1/(V√N) unless V = 1: 11.8 % at V = 0.5 and D = V/2
    // (the edge of the band the live figure reads in), 0.5 % at the 633 nm bench's V = 0.985.
    const edge = Math.acos(0.5);
    expect(phaseFloor((N / 2) * 1.25, (N / 2) * 0.75, 0.5, edge) * 0.5 * Math.sqrt(N)).toBeCloseTo(Math.sqrt(0.9375 / 0.75), 12);
    expect(phaseFloor((N / 2) * 1.5, (N / 2) * 0.5, 1, edge) * Math.sqrt(N)).toBeCloseTo(1, 12);
  });

  it('is reached by the quadrature-error readings of Poisson counts, with equal and unequal efficiencies', () => {
    // Monte Carlo: 20,000 bins per case, so the standard deviation is good to 1/√(2·20,000) = 0.5 % (1σ).
    const rng = mulberry32(21);
    const V = 0.8;
    const N0 = 2000; // photons per bin into the interferometer, before detection
    for (const eta of [1, 0.8]) {
      for (const offset of [0, 0.5, -0.5]) {
        const phi = Math.PI / 2 + offset;
        const a = (N0 / 2) * (1 + V * Math.cos(phi));
        const b = eta * (N0 / 2) * (1 - V * Math.cos(phi));
        const measured = sd([...readings(rng, 20_000, a, b, V, eta)]);
        // Near mid-fringe the estimator is efficient: within 2 % (4σ) of the bound.
        expect(measured / phaseFloor(a, b, V, phi)).toBeGreaterThan(0.98);
        expect(measured / phaseFloor(a, b, V, phi)).toBeLessThan(1.02);
      }
    }
    // Unequal efficiencies tilt the floor: at ±0.5 rad with η = 0.8 the two sides differ by 9 %
    // per detected photon, which the equal-efficiency formula, symmetric about mid-fringe, misses.
    const side = (offset: number) => {
      const phi = Math.PI / 2 + offset;
      const a = (N0 / 2) * (1 + V * Math.cos(phi));
      const b = 0.8 * (N0 / 2) * (1 - V * Math.cos(phi));
      return phaseFloor(a, b, V, phi) * Math.sqrt(a + b);
    };
    expect(side(-0.5) / side(0.5)).toBeCloseTo(1.089, 3);
  });
});

describe('phase floor with dark counts', () => {
  /**
   * Fisher information of the phase in two independent Poisson counts, summed directly over the
   * counts: I = Σᵢ Σₙ pᵢ(n)·(∂ ln pᵢ(n)/∂φ)², with ∂ ln p(n)/∂φ = (n/λ − 1)·∂λ/∂φ for Poisson p (the
   * score; Kay, Fundamentals of Statistical Signal Processing, vol. 1, ch. 3, from memory), ∂λ/∂φ
   * by central difference and the pmf from lnGamma: no use of the closed form.
   */
  function fisherBySum(mean: (phi: number) => [number, number], phi: number): number {
    const h = 1e-5;
    const [a0, b0] = mean(phi);
    const [a1, b1] = mean(phi + h);
    const [a2, b2] = mean(phi - h);
    let info = 0;
    for (const [lam, slope] of [[a0, (a1 - a2) / (2 * h)], [b0, (b1 - b2) / (2 * h)]] as const) {
      const top = Math.ceil(lam + 40 * Math.sqrt(lam) + 40);
      for (let n = 0; n <= top; n++) {
        const p = Math.exp(n * Math.log(lam) - lam - lnGamma(n + 1));
        info += p * ((n / lam - 1) * slope) ** 2;
      }
    }
    return info;
  }

  it('is the Cramér–Rao bound 1/√I of the two Poisson outputs with darks, by a direct sum over the counts', () => {
    // Means η_a·S(1 + V cos φ)/2 + D_a and η_b·S(1 − V cos φ)/2 + D_b: a dim InGaAs-like case where
    // the darks are a third of the counts, unequal efficiencies and darks.
    const S = 400;
    const V = 0.9;
    const [etaA, etaB, dA, dB] = [0.5, 0.6, 40, 90];
    const mean = (phi: number): [number, number] => [(etaA * S * (1 + V * Math.cos(phi))) / 2 + dA, (etaB * S * (1 - V * Math.cos(phi))) / 2 + dB];
    for (const phi of [Math.PI / 2, Math.PI / 2 + 0.5, Math.PI / 2 - 0.9, 0.3, 2.9]) {
      const [la, lb] = mean(phi);
      const closed = phaseFloor(la - dA, lb - dB, V, phi, dA, dB);
      expect(closed * Math.sqrt(fisherBySum(mean, phi))).toBeCloseTo(1, 6);
    }
  });

  it('is the bound of a fringe of all N counts at the contrast the darks leave, V·S/N, for equal darks and efficiencies', () => {
    // Equal darks d per output on S signal counts: N = S + 2d counts in (N/2)(1 ± V' cos φ), V' = V·S/N.
    const S = 9000; // signal counts per second on the 1550 nm demo bench, near mid-fringe
    const d = 750; // its darks per output per second (600 and 900 c/s)
    const V = 0.95;
    const N = S + 2 * d;
    const v2 = (V * S) / N;
    for (const phi of [Math.PI / 2, 1.2, 2.3]) {
      const sa = (S / 2) * (1 + V * Math.cos(phi));
      const sb = (S / 2) * (1 - V * Math.cos(phi));
      expect(phaseFloor(sa, sb, V, phi, d, d)).toBeCloseTo(1 / Math.sqrt(N * phaseFisherPerPhoton(v2, phi)), 12);
    }
    // At mid-fringe the darks raise the floor by √(N/S): 8 % on that bench.
    expect(phaseFloor(S / 2, S / 2, V, Math.PI / 2, d, d) / phaseFloor(S / 2, S / 2, V, Math.PI / 2)).toBeCloseTo(Math.sqrt(N / S), 12);
  });

  it('is reached by the quadrature-error readings of counts with darks, the darks taken off (Monte Carlo)', () => {
    // 20,000 bins per case: the standard deviation is good to 0.5 % (1σ), so 2 % is 4σ.
    const rng = mulberry32(1550);
    const V = 0.95;
    const [dA, dB] = [60, 90];
    for (const offset of [0, 0.4, -0.4]) {
      const phi = Math.PI / 2 + offset;
      const sa = 450 * (1 + V * Math.cos(phi));
      const sb = 450 * (1 - V * Math.cos(phi));
      const cal = { visibility: V, efficiencyRatio: 1, darkA: dA, darkB: dB };
      const eps = Array.from({ length: 20_000 }, () => quadratureError(poisson(rng, sa + dA), poisson(rng, sb + dB), cal).value);
      const ratio = sd(eps) / phaseFloor(sa, sb, V, phi, dA, dB);
      expect(ratio).toBeGreaterThan(0.98);
      expect(ratio).toBeLessThan(1.02);
    }
  });

  it('becomes unbounded at the fringe extremes, where the slope vanishes', () => {
    // As 1/|sin φ| near φ = 0 and φ = π: ten times nearer, ten times higher (to 0.1 %).
    const at = (phi: number) => phaseFloor(1000 * (1 + 0.9 * Math.cos(phi)), 1000 * (1 - 0.9 * Math.cos(phi)), 0.9, phi, 50, 50);
    expect(at(0)).toBe(Number.POSITIVE_INFINITY);
    expect(at(1e-3) / at(1e-2)).toBeCloseTo(10, 2);
    expect(at(Math.PI - 1e-3) / at(Math.PI - 1e-2)).toBeCloseTo(10, 2);
  });
});

describe('phase noise pooled over segments', () => {
  const flat = (phases: ArrayLike<number>): NoiseSegment => ({ phases, signalA: 5000, signalB: 5000, phase: Math.PI / 2 });

  it('reads no noise in a straight line and ignores a steady drift or a step between segments', () => {
    expect(phaseSensitivity([flat(Float64Array.from({ length: 50 }, (_, i) => 0.3 + 0.01 * i))], 1)!.measured).toBeCloseTo(0, 12);
    const rng = mulberry32(4);
    const sigma = 0.02;
    const white = Array.from({ length: 10 }, () => Float64Array.from({ length: 100 }, () => sigma * gaussian(rng)));
    const drifted = white.map((w, k) => Float64Array.from(w, (e, i) => e + 0.7 * k + 0.004 * i));
    const a = phaseSensitivity(white.map(flat), 1)!;
    const b = phaseSensitivity(drifted.map(flat), 1)!;
    expect(b.measured).toBeCloseTo(a.measured, 12);
    expect(a.dof).toBe(980);
    expect(Math.abs(a.measured / sigma - 1)).toBeLessThan(3 / Math.sqrt(2 * 980));
  });

  it('states the 1σ of a standard deviation, 1/√(2·dof), as the exact χ distribution gives it', () => {
    // For Gaussian readings dof·s²/σ² is χ² with dof degrees of freedom (common practice), so
    // sd(s)/σ = √(1 − c²) with c = √(2/k)·Γ((k+1)/2)/Γ(k/2); the approximation is good to 0.3 % at k = 98.
    for (const k of [98, 980]) {
      const c = Math.sqrt(2 / k) * Math.exp(lnGamma((k + 1) / 2) - lnGamma(k / 2));
      expect(Math.sqrt(1 - c * c) * Math.sqrt(2 * k)).toBeCloseTo(1, 2);
    }
  });

  it('gives a ratio whose spread over independent readings matches its stated error (Monte Carlo)', () => {
    // 400 readings of ten 100-bin segments of Poisson counts at mid-fringe; the spread of the ratio is
    // estimated to 1/√(2·399) = 3.5 %, so 10 % is a 3σ bound.
    const rng = mulberry32(33);
    const V = 0.9;
    const perOutput = 1000;
    const ratios: number[] = [];
    const errs: number[] = [];
    for (let r = 0; r < 400; r++) {
      const segments = Array.from({ length: 10 }, () => ({ phases: readings(rng, 100, perOutput, perOutput, V, 1), signalA: perOutput, signalB: perOutput, phase: Math.PI / 2 }));
      const s = phaseSensitivity(segments, V)!;
      ratios.push(s.ratio);
      errs.push(s.ratioErr);
      expect(s.visibilityLimit).toBeCloseTo(1 / (V * Math.sqrt(2 * perOutput)), 12);
    }
    const meanErr = errs.reduce((a, b) => a + b, 0) / errs.length;
    expect(sd(ratios) / meanErr).toBeGreaterThan(0.9);
    expect(sd(ratios) / meanErr).toBeLessThan(1.1);
    // …around the floor 1/V.
    expect(Math.abs(ratios.reduce((a, b) => a + b, 0) / ratios.length - 1 / V)).toBeLessThan(3 * (meanErr / Math.sqrt(ratios.length)) + 0.003);
  });

  it('gives nothing without a segment of three readings or with no photons', () => {
    expect(phaseSensitivity([flat([0, 1])], 0.9)).toBeNull();
    expect(phaseSensitivity([{ ...flat([0, 1, 2]), signalA: 0, signalB: 0 }], 0.9)).toBeNull();
  });
});
