// Phase sensitivity against the shot-noise limit: what a squeezed-light upgrade would have to beat.

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

/**
 * Least phase noise per bin, rad, from two outputs counting `signalA` and `signalB` photons per bin
 * (darks taken off) over `darkA` and `darkB` dark counts per bin, at operating phase φ of a fringe
 * of visibility V (that of the signal, net of darks), infinite at V = 0 or a fringe extreme: the
 * Cramér–Rao bound 1/√F (Kay, Fundamentals of Statistical Signal Processing, vol. 1: Estimation
 * Theory, ch. 3, from memory). For independent Poisson counts of means λᵢ the Fisher information is
 * F = Σ(∂λᵢ/∂φ)²/λᵢ (common practice); with λ_a = A(1 + V cos φ) + d_a, λ_b = B(1 − V cos φ) + d_b
 * and the signals s_a = A(1 + V cos φ), s_b = B(1 − V cos φ) that is
 * F = V² sin²φ·[(s_a/(1 + V cos φ))²/(s_a + d_a) + (s_b/(1 − V cos φ))²/(s_b + d_b)].
 * Dark counts are Poisson noise with no fringe: they add to each output's variance and nothing to
 * its slope. With equal darks d_a = d_b and equal efficiencies (A = B) the counts are a fringe of
 * N = S + d_a + d_b counts at the lower contrast V' = V·S/N, so F = N·V'² sin²φ/(1 − V'² cos²φ):
 * 1/(V'√N) at mid-fringe. Without darks and with A = B it is N·V² sin²φ/(1 − V² cos²φ)
 * (phaseFisherPerPhoton), which error propagation through D = (N_a − N_b)/N also gives:
 * Δφ = ΔD/|∂⟨D⟩/∂φ| with ⟨D⟩ = V cos φ and the binomial split ΔD² = (1 − V² cos²φ)/N. So
 * Δφ = 1/(V√N) at mid-fringe, more away from it unless V = 1; unequal efficiencies tilt it to one
 * side of the fringe (on the 810 nm demo bench, η_b/η_a = 1.11 and V = 0.97: 1.015/√N and
 * 1.066/√N at ±0.5 rad from mid-fringe, 1.031/√N at it, without darks).
 */
export function phaseFloor(signalA: number, signalB: number, visibility: number, phase: number, darkA = 0, darkB = 0): number {
  const vc = visibility * Math.cos(phase);
  const vs2 = (visibility * Math.sin(phase)) ** 2;
  // (∂λ/∂φ)²/λ of one output: its fringe amplitude s/p squared over its whole mean s + d.
  const term = (signal: number, dark: number, p: number) => (p > 0 && signal + dark > 0 ? (signal / p) ** 2 / (signal + dark) : 0);
  const fisher = vs2 * (term(signalA, darkA, 1 + vc) + term(signalB, darkB, 1 - vc));
  return 1 / Math.sqrt(fisher);
}

/** Squeezing of parameter r in dB: 20·r·log₁₀e (Δφ ≈ e^(−r)/√N; Caves, PRD 23, 1693 (1981)). */
export function squeezingDb(r: number): number {
  return 20 * r * Math.LOG10E;
}

/** A stretch of per-bin phase readings taken at one operating point (a second of a hold). */
export interface NoiseSegment {
  /** Phase reading of each bin, rad (the quadrature error near mid-fringe). */
  phases: ArrayLike<number>;
  /** Signal photons per bin of each output over the segment (darks taken off). */
  signalA: number;
  signalB: number;
  /** Dark counts per bin of each output, which the floor counts as noise; 0 when not calibrated. */
  darkA?: number;
  darkB?: number;
  /** Operating phase of the segment, rad: π/2 at mid-fringe. */
  phase: number;
}

export interface PhaseSensitivity {
  /** Measured phase noise per bin, rad: pooled over the segments, each about its own straight line. */
  measured: number;
  /** Degrees of freedom of `measured`: Σ(n − 2) over the segments. */
  dof: number;
  /** Shot-noise limit 1/√N for N detected photons per bin, rad. */
  shotNoiseLimit: number;
  /** Best phase noise reachable at this visibility and operating point with the segments' dark counts (phaseFloor), rad: 1/(V√N) at mid-fringe without darks. */
  visibilityLimit: number;
  /** The same without the dark counts: what the visibility alone costs over shot noise, which alignment can gain back. */
  darkFreeLimit: number;
  /** measured / (1/√N) and in dB (20·log₁₀; negative = below shot noise). */
  ratio: number;
  /** 1σ of `ratio` from `dof`: ratio/√(2·dof). */
  ratioErr: number;
  dB: number;
  /** measured / visibilityLimit and in dB. */
  ratioToVisibilityLimit: number;
  dBToVisibilityLimit: number;
}

/** Residual sum of squares of a series about its least-squares straight line over the bin index. */
function squaresAboutLine(y: ArrayLike<number>): number {
  const n = y.length;
  const mid = (n - 1) / 2;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += y[i] as number;
  mean /= n;
  let sxy = 0;
  for (let i = 0; i < n; i++) sxy += (i - mid) * ((y[i] as number) - mean);
  // Σ(i − mid)² over i = 0..n−1 is n(n² − 1)/12.
  const slope = sxy / ((n * (n * n - 1)) / 12);
  let ss = 0;
  for (let i = 0; i < n; i++) ss += ((y[i] as number) - mean - slope * (i - mid)) ** 2;
  return ss;
}

/**
 * The phase noise per bin against the shot-noise limit and the floor at this visibility, from
 * segments of readings (e.g. the seconds of a hold). Each segment's readings are taken about their
 * own least-squares line, so a drift steady over a segment is not counted as noise (the phase tile
 * reports it as the drift rate); a random-walk drift still adds DT/15 rad² over a segment of T s
 * (D in rad²/s), against DT/6 about the mean alone. Variances are pooled, Σ RSS/Σ(n − 2), and both
 * limits averaged as variances with the same weights. For Gaussian readings dof·σ̂²/σ² is χ² with
 * dof degrees of freedom, so the relative 1σ of σ̂ is 1/√(2·dof) (common practice). Null when no
 * segment has three readings or a segment has no photons.
 */
export function phaseSensitivity(segments: readonly NoiseSegment[], visibility: number): PhaseSensitivity | null {
  let rss = 0;
  let dof = 0;
  let shot2 = 0;
  let floor2 = 0;
  let darkFree2 = 0;
  for (const s of segments) {
    const n = s.phases.length;
    if (n < 3) continue;
    const photons = s.signalA + s.signalB;
    if (!(photons > 0)) return null;
    const k = n - 2;
    rss += squaresAboutLine(s.phases);
    dof += k;
    shot2 += k / photons;
    floor2 += k * phaseFloor(s.signalA, s.signalB, visibility, s.phase, s.darkA, s.darkB) ** 2;
    darkFree2 += k * phaseFloor(s.signalA, s.signalB, visibility, s.phase) ** 2;
  }
  if (dof === 0) return null;
  const measured = Math.sqrt(rss / dof);
  const shotNoiseLimit = Math.sqrt(shot2 / dof);
  const visibilityLimit = Math.sqrt(floor2 / dof);
  const ratio = measured / shotNoiseLimit;
  const ratioToVisibilityLimit = measured / visibilityLimit;
  return {
    measured,
    dof,
    shotNoiseLimit,
    visibilityLimit,
    darkFreeLimit: Math.sqrt(darkFree2 / dof),
    ratio,
    ratioErr: ratio / Math.sqrt(2 * dof),
    dB: 20 * Math.log10(ratio),
    ratioToVisibilityLimit,
    dBToVisibilityLimit: 20 * Math.log10(ratioToVisibilityLimit),
  };
}
