// Phase of the interferometer while the scan holds still: from the normalized difference of the two
// outputs with the fitted visibility and the outputs' relative efficiency, the quadrature error
// signal used to hold at mid-fringe, and the drift rate of the unwrapped phase.
import type { Measured } from './measured.ts';

export interface HoldCalibration {
  /** Visibility from the latest sweep fit (net when dark counts are subtracted below). */
  visibility: number;
  /** Detection efficiency of output b relative to output a, η_b/η_a. */
  efficiencyRatio: number;
  /** Dark counts per bin subtracted before the difference; 0 when uncalibrated. */
  darkA?: number;
  darkB?: number;
}

/**
 * D = (a − b′)/(a + b′) with a = n_a − d_a and b′ = (n_b − d_b)/(η_b/η_a): equals V·cos θ for the
 * model N_a ∝ η_a(1 + V cos θ), N_b ∝ η_b(1 − V cos θ). Poisson error propagated from both counts.
 */
export function normalizedDifference(countsA: number, countsB: number, cal: HoldCalibration): Measured {
  const eta = cal.efficiencyRatio;
  const x = countsA - (cal.darkA ?? 0);
  const y = (countsB - (cal.darkB ?? 0)) / eta;
  const s = x + y;
  if (!(s > 0)) return { value: Number.NaN, err: Number.NaN };
  const varD = (4 * (y * y * Math.max(countsA, 0) + (x * x * Math.max(countsB, 0)) / (eta * eta))) / (s * s * s * s);
  return { value: (x - y) / s, err: Math.sqrt(varD) };
}

/**
 * Phase θ ∈ [0, π] of one bin: θ = arccos(D/V). Two outputs fix cos θ only, so the sign of θ is
 * not observable from one bin; σ_θ = σ_D/(V|sin θ|) grows without bound at the fringe extremes.
 */
export function phaseAtHold(countsA: number, countsB: number, cal: HoldCalibration): Measured {
  const d = normalizedDifference(countsA, countsB, cal);
  const c = Math.min(1, Math.max(-1, d.value / cal.visibility));
  const theta = Math.acos(c);
  const sin = Math.sqrt(1 - c * c);
  return { value: theta, err: sin > 0 ? d.err / (cal.visibility * sin) : Number.POSITIVE_INFINITY };
}

/**
 * Mid-fringe (quadrature) error signal ε, rad: the phase offset from θ = slope·π/2 where the two
 * outputs balance (D = 0) and the response to phase is steepest. cos(±π/2 + ε) = ∓sin ε, so
 * ε = −slope·arcsin(D/V); zero on lock, linear in the offset for small ε.
 */
export function quadratureError(countsA: number, countsB: number, cal: HoldCalibration, slope: 1 | -1 = 1): Measured {
  const d = normalizedDifference(countsA, countsB, cal);
  const s = Math.min(1, Math.max(-1, d.value / cal.visibility));
  const eps = -slope * Math.asin(s);
  const cos = Math.sqrt(1 - s * s);
  return { value: eps, err: cos > 0 ? d.err / (cal.visibility * cos) : Number.POSITIVE_INFINITY };
}

/** Remove 2π jumps from phases wrapped to (−π, π]: successive steps are taken as the shortest. */
export function unwrapPhase(wrapped: ArrayLike<number>): Float64Array {
  const n = wrapped.length;
  const out = new Float64Array(n);
  if (n === 0) return out;
  out[0] = wrapped[0] as number;
  let offset = 0;
  for (let i = 1; i < n; i++) {
    const d = (wrapped[i] as number) - (wrapped[i - 1] as number);
    offset -= 2 * Math.PI * Math.round(d / (2 * Math.PI));
    out[i] = (wrapped[i] as number) + offset;
  }
  return out;
}

/**
 * Within this distance of a fringe extreme (θ = 0 or π), rad, a reading is too near where the
 * phase's slope vanishes to be read as a phase: noise on arccos near ±1 is large, the reading is
 * clipped there, and below V = 1 the Cramér–Rao bound grows without limit (phaseFloor: at this
 * margin's edge 1.3× its mid-fringe value at V = 0.95, 1.9× at V = 0.8). unfoldPhase takes a turn
 * inside it as a crossing of the extreme.
 */
export const FRINGE_EXTREME_MARGIN = 0.35;

export interface UnfoldOptions {
  /** A turn this close to 0 or π, rad, is taken as a crossing of the fringe extreme. */
  margin?: number;
  /** Movement back from a running extreme, rad, that confirms a turn (rejects noise). */
  hysteresis?: number;
}

/**
 * Unfold phases folded into [0, π] (from phaseAtHold) into a continuous drift, assuming the drift
 * keeps its direction through the fringe extremes: a turn within `margin` of 0 or π is taken as a
 * crossing, a turn elsewhere as a real reversal. A heuristic: a drift that truly reverses at an
 * extreme is read as continuing.
 */
export function unfoldPhase(folded: ArrayLike<number>, options: UnfoldOptions = {}): Float64Array {
  const margin = options.margin ?? FRINGE_EXTREME_MARGIN;
  const hyst = options.hysteresis ?? 0.1; // rad
  const n = folded.length;
  const out = new Float64Array(n);
  if (n === 0) return out;
  let base = 0;
  let sign = 1;
  let dir = 0;
  let extIdx = 0;
  // After a crossing, noise near the extreme must not read as a second crossing back: turns are
  // ignored until the phase has left the margin zone.
  let locked = false;
  out[0] = folded[0] as number;
  for (let i = 1; i < n; i++) {
    const f = folded[i] as number;
    const ext = folded[extIdx] as number;
    if (locked) {
      if (f > margin && f < Math.PI - margin) {
        locked = false;
        extIdx = i;
      }
    } else if (dir === 0) {
      if (Math.abs(f - ext) > hyst) {
        dir = f > ext ? 1 : -1;
        extIdx = i;
      }
    } else if ((f - ext) * dir > 0) {
      extIdx = i;
    } else if ((ext - f) * dir > hyst) {
      const crossing = (dir < 0 && ext < margin) || (dir > 0 && ext > Math.PI - margin);
      if (crossing) {
        if (dir > 0) base += 2 * sign * Math.PI;
        sign = -sign;
        for (let j = extIdx + 1; j < i; j++) out[j] = base + sign * (folded[j] as number);
        locked = true;
      }
      dir = -dir;
      extIdx = i;
    }
    out[i] = base + sign * f;
  }
  return out;
}

/**
 * Drift rate of an unwrapped phase series, rad/s, by least squares on time (s); the error comes
 * from the residual scatter, so it holds whatever the per-point errors are.
 */
export function driftRate(timesS: ArrayLike<number>, phase: ArrayLike<number>): Measured {
  const n = timesS.length;
  if (n < 3 || phase.length !== n) return { value: Number.NaN, err: Number.NaN };
  let mt = 0;
  let mp = 0;
  for (let i = 0; i < n; i++) {
    mt += timesS[i] as number;
    mp += phase[i] as number;
  }
  mt /= n;
  mp /= n;
  let stt = 0;
  let stp = 0;
  for (let i = 0; i < n; i++) {
    const dt = (timesS[i] as number) - mt;
    stt += dt * dt;
    stp += dt * ((phase[i] as number) - mp);
  }
  if (!(stt > 0)) return { value: Number.NaN, err: Number.NaN };
  const slope = stp / stt;
  let ssr = 0;
  for (let i = 0; i < n; i++) ssr += ((phase[i] as number) - mp - slope * ((timesS[i] as number) - mt)) ** 2;
  return { value: slope, err: Math.sqrt(ssr / (n - 2) / stt) };
}
