// Visibility over time: combined from the latest sweep fits, estimated from the fringe envelope
// while the phase only drifts (no sweep), and as a trend for the screen and the alarms.
import type { Measured } from './measured.ts';
import type { HoldCalibration } from './phase.ts';

export interface VisibilityPoint {
  /** Middle of the sweep or window, ms since the epoch. */
  timeMs: number;
  value: number;
  err: number;
}

/** Sweep fits combined by default: the latest up and down pass of a triangle scan and two more. */
const DEFAULT_LATEST = 4;

/**
 * Inverse-variance mean of the latest `count` fits. When they scatter more than their errors allow
 * (χ²/dof > 1, e.g. the visibility is really changing or up and down sweeps differ) the error is
 * scaled by √(χ²/dof) rather than pretending to a precision the data do not show.
 */
export function runningVisibility(points: readonly VisibilityPoint[], count = DEFAULT_LATEST): (Measured & { timeMs: number; n: number }) | null {
  const latest = [...points].filter((p) => p.err > 0 && Number.isFinite(p.value)).sort((a, b) => a.timeMs - b.timeMs).slice(-count);
  if (latest.length === 0) return null;
  let sw = 0;
  let swv = 0;
  let swt = 0;
  for (const p of latest) {
    const w = 1 / (p.err * p.err);
    sw += w;
    swv += w * p.value;
    swt += w * p.timeMs;
  }
  const mean = swv / sw;
  let chi2 = 0;
  for (const p of latest) chi2 += ((p.value - mean) / p.err) ** 2;
  const birge = latest.length > 1 ? Math.max(1, chi2 / (latest.length - 1)) : 1;
  return { value: mean, err: Math.sqrt(birge / sw), timeMs: swt / sw, n: latest.length };
}

export interface EnvelopeEstimate extends Measured {
  bins: number;
  /**
   * Fraction of bins where output a exceeds output b (efficiency-corrected): about ½ when the phase
   * covered the fringe evenly, which the estimate assumes.
   */
  balance: number;
  warnings: string[];
}

/** A window whose balance lies outside this band did not sample the fringe evenly. */
const BALANCE_BAND = [0.25, 0.75] as const;

/** Photons per smoothed point of the coverage check: enough that shot noise does not fake a turn. */
const COVERAGE_PHOTONS = 200;

/**
 * Whether the phase passed through a whole fringe inside the window: the normalised difference,
 * smoothed, must go from one extreme of its range to the other and back. A window that saw only a
 * slice of a fringe (a slow drift through mid-fringe) does not, and its spread is the slice's, not
 * the fringe's: the envelope would read V far too low, and balance alone (half the bins on each
 * side) does not catch it.
 */
function turnsThroughFringe(diff: Float64Array, sum: Float64Array): boolean {
  const n = diff.length;
  let photons = 0;
  for (let i = 0; i < n; i++) photons += sum[i] as number;
  const k = Math.max(1, Math.min(Math.floor(n / 20), Math.ceil((COVERAGE_PHOTONS * n) / Math.max(photons, 1))));
  const d: number[] = [];
  for (let i = 0; i + k <= n; i += k) {
    let sd = 0;
    let ss = 0;
    for (let j = i; j < i + k; j++) {
      sd += diff[j] as number;
      ss += sum[j] as number;
    }
    if (ss > 0) d.push(sd / ss);
  }
  if (d.length < 5) return false;
  const hi = Math.max(...d);
  const lo = Math.min(...d);
  // A still phase spreads the smoothed difference by shot noise alone, ~1/√(photons per point):
  // its quarters are noise visiting them. A fringe spans 2V, far above 8 of those.
  const perPoint = photons / d.length;
  if (!(hi - lo > 8 / Math.sqrt(Math.max(perPoint, 1)))) return false;
  const band = (hi - lo) / 4;
  // The order in which the smoothed difference visits its top and bottom quarters, repeats
  // merged: top → bottom → top (or the reverse) is a whole fringe for a drift in one direction.
  // A slice of a fringe gives at most bottom → top. Noise at a quarter's edge only repeats a letter.
  let visits = 0;
  let last: 'top' | 'bottom' | null = null;
  for (const v of d) {
    const at = v >= hi - band ? 'top' : v <= lo + band ? 'bottom' : null;
    if (at && at !== last) {
      visits++;
      last = at;
    }
  }
  return visits >= 3;
}

/**
 * Visibility from the spread of the two outputs while the phase drifts over the window, without a
 * fit. With x = n_a − d_a, y = (n_b − d_b)/η, Δ = x − y and S = x + y, a uniformly sampled phase gives
 * ⟨Δ²⟩ = V²⟨S²⟩/2 plus shot noise; the shot-noise term w = n_a + n_b/η² is an unbiased estimate of
 * Var(Δ) = Var(S), so subtracting it from both removes the Poisson bias that makes the max/min
 * envelope overstate V at low counts: V² = 2Σ(Δ² − w)/Σ(S² − w). Error by the delta method on
 * the ratio of sums, treating bins as independent (slow drift correlates them: a lower bound).
 */
export function envelopeVisibility(countsA: ArrayLike<number>, countsB: ArrayLike<number>, cal: Omit<HoldCalibration, 'visibility'>): EnvelopeEstimate | null {
  const n = countsA.length;
  if (n < 8 || countsB.length !== n) return null;
  const eta = cal.efficiencyRatio;
  const num = new Float64Array(n);
  const den = new Float64Array(n);
  const diff = new Float64Array(n);
  const total = new Float64Array(n);
  let sNum = 0;
  let sDen = 0;
  let above = 0;
  for (let i = 0; i < n; i++) {
    const a = countsA[i] as number;
    const b = countsB[i] as number;
    const x = a - (cal.darkA ?? 0);
    const y = (b - (cal.darkB ?? 0)) / eta;
    const w = a + b / (eta * eta);
    num[i] = 2 * ((x - y) ** 2 - w);
    den[i] = (x + y) ** 2 - w;
    diff[i] = x - y;
    total[i] = x + y;
    sNum += num[i] as number;
    sDen += den[i] as number;
    if (x > y) above++;
  }
  if (!(sDen > 0)) return null;
  const v2 = sNum / sDen;
  let varR = 0;
  for (let i = 0; i < n; i++) varR += ((num[i] as number) - v2 * (den[i] as number)) ** 2;
  varR /= sDen * sDen;
  const value = Math.sqrt(Math.max(0, v2));
  const balance = above / n;
  const warnings: string[] = [];
  if (balance < BALANCE_BAND[0] || balance > BALANCE_BAND[1]) warnings.push('the phase did not sample the fringe evenly in this window: the envelope estimate is biased');
  else if (!turnsThroughFringe(diff, total)) warnings.push('the phase did not pass through a whole fringe in this window: the envelope would read V too low');
  // At V = 0 the delta method fails; quote the V whose square is one σ of V² instead.
  const err = value > 0 ? Math.sqrt(varR) / (2 * value) : Math.sqrt(Math.sqrt(varR));
  return { value, err, bins: n, balance, warnings };
}

export interface VisibilityTrend {
  points: VisibilityPoint[];
  /** Weighted least-squares slope, visibility per hour; null with fewer than 3 points. */
  slopePerHour: Measured | null;
}

/** Time-ordered series with its drift, for the trend plot and the visibility alarms. */
export function visibilityTrend(points: readonly VisibilityPoint[]): VisibilityTrend {
  const sorted = [...points].filter((p) => p.err > 0 && Number.isFinite(p.value)).sort((a, b) => a.timeMs - b.timeMs);
  if (sorted.length < 3) return { points: sorted, slopePerHour: null };
  const t0 = (sorted[0] as VisibilityPoint).timeMs;
  let sw = 0;
  let st = 0;
  let sv = 0;
  for (const p of sorted) {
    const w = 1 / (p.err * p.err);
    sw += w;
    st += w * (p.timeMs - t0);
    sv += w * p.value;
  }
  const mt = st / sw;
  const mv = sv / sw;
  let stt = 0;
  let stv = 0;
  for (const p of sorted) {
    const w = 1 / (p.err * p.err);
    const dt = p.timeMs - t0 - mt;
    stt += w * dt * dt;
    stv += w * dt * (p.value - mv);
  }
  if (!(stt > 0)) return { points: sorted, slopePerHour: null };
  const msPerHour = 3_600_000;
  return { points: sorted, slopePerHour: { value: (stv / stt) * msPerHour, err: Math.sqrt(1 / stt) * msPerHour } };
}
