// Phase sensitivity against the shot-noise limit: what a squeezed-light upgrade would have to beat.

export interface PhaseSensitivity {
  /** Measured phase noise per bin, rad. */
  measured: number;
  /** Shot-noise limit 1/√N for N detected photons per bin, rad. */
  shotNoiseLimit: number;
  /** Best phase noise reachable at this visibility, 1/(V√N), rad (at mid-fringe). */
  visibilityLimit: number;
  /** measured / (1/√N) and in dB (20·log₁₀; negative = below shot noise). */
  ratio: number;
  dB: number;
  /** measured / (1/(V√N)) and in dB. */
  ratioToVisibilityLimit: number;
  dBToVisibilityLimit: number;
}

/**
 * Fisher information per detected photon for the phase of a fringe of visibility V at phase φ:
 * V² sin²φ/(1 − V² cos²φ). V² at mid-fringe (Δφ = 1/(V√N)); 1 at every phase when V = 1.
 */
export function phaseFisherPerPhoton(visibility: number, phase: number): number {
  const s = Math.sin(phase);
  const c = Math.cos(phase);
  const v2 = visibility * visibility;
  const den = 1 - v2 * c * c;
  return den > 0 ? (v2 * s * s) / den : 1;
}

/** Squeezing of parameter r in dB: 20·r·log₁₀e (Δφ ≈ e^(−r)/√N; Caves, PRD 23, 1693 (1981)). */
export function squeezingDb(r: number): number {
  return 20 * r * Math.LOG10E;
}

/** Sample standard deviation (n − 1) of the phase readings of successive bins, rad. */
export function phaseNoise(phases: ArrayLike<number>): number {
  const n = phases.length;
  if (n < 2) return Number.NaN;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += phases[i] as number;
  mean /= n;
  let s = 0;
  for (let i = 0; i < n; i++) s += ((phases[i] as number) - mean) ** 2;
  return Math.sqrt(s / (n - 1));
}

/** Compare the measured phase noise per bin with the limits for `photonsPerBin` detected photons. */
export function phaseSensitivity(measuredRad: number, photonsPerBin: number, visibility: number): PhaseSensitivity {
  if (!(photonsPerBin > 0)) throw new RangeError('photons per bin must be positive');
  const shotNoiseLimit = 1 / Math.sqrt(photonsPerBin);
  const visibilityLimit = visibility > 0 ? shotNoiseLimit / visibility : Number.POSITIVE_INFINITY;
  const ratio = measuredRad / shotNoiseLimit;
  const ratioToVisibilityLimit = measuredRad / visibilityLimit;
  return {
    measured: measuredRad,
    shotNoiseLimit,
    visibilityLimit,
    ratio,
    dB: 20 * Math.log10(ratio),
    ratioToVisibilityLimit,
    dBToVisibilityLimit: 20 * Math.log10(ratioToVisibilityLimit),
  };
}
