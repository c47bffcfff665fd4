// The two-output interferometer model the fits, fixtures and phase estimates share.

/**
 * Output probabilities of a lossless balanced two-output interferometer at phase difference δ:
 * P₁ = cos²(δ/2), P₂ = sin²(δ/2) (Gerry & Knight, Introductory Quantum Optics, ch. 6).
 */
export function outputProbabilities(delta: number): { a: number; b: number } {
  const c = Math.cos(delta / 2);
  const s = Math.sin(delta / 2);
  return { a: c * c, b: s * s };
}

export interface FringeParams {
  /** Mean counts per bin of output a without dark counts. */
  amplitudeA: number;
  /** Mean counts per bin of output b without dark counts. */
  amplitudeB: number;
  /** Fringe visibility, 0..1. */
  visibility: number;
  /** Fringe period, x units. */
  period: number;
  /** Phase at x = 0, rad. */
  phase: number;
  /** Quadratic (piezo nonlinearity) coefficient q, 1/x units: θ = 2π(x + q·x²)/P + φ. */
  quadratic: number;
}

/** Interferometer phase θ at scan coordinate x. */
export function fringePhase(x: number, p: Pick<FringeParams, 'period' | 'phase' | 'quadratic'>): number {
  return (2 * Math.PI * (x + p.quadratic * x * x)) / p.period + p.phase;
}

/**
 * Expected counts per bin of both outputs: N_a = A(1 + V cos θ) + d_a, N_b = B(1 − V cos θ) + d_b,
 * with d the dark counts per bin.
 */
export function expectedCounts(x: number, p: FringeParams, darkA = 0, darkB = 0): { a: number; b: number } {
  const c = Math.cos(fringePhase(x, p));
  return { a: p.amplitudeA * (1 + p.visibility * c) + darkA, b: p.amplitudeB * (1 - p.visibility * c) + darkB };
}
