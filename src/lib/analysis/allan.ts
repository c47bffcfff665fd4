// Allan deviation of a rate or phase series sampled every τ₀ (IEEE Std 1139-2008; Riley, Handbook
// of Frequency Stability Analysis, NIST SP 1065 (2008), ch. 5). For counts, white Poisson noise
// gives σ(τ) = √(R/τ): the τ^(−1/2) slope; drifts turn the curve up at long τ.
import { chiSquareQuantile, ONE_SIGMA_CL } from './special-functions.ts';

export interface AllanPoint {
  /** Averaging time, s. */
  tau: number;
  /** Allan deviation, in the unit of the series. */
  adev: number;
  /** 1σ error adev/√(2·edf): the spread of the estimate for large edf. */
  err: number;
  /** 68.27% χ² interval adev·√(edf/χ²), asymmetric and honest at small edf. */
  lo: number;
  hi: number;
  /** Equivalent degrees of freedom of the variance estimate, for white FM noise (see `whiteFmEdf`). */
  edf: number;
  /** Number of second differences averaged. */
  terms: number;
}

/**
 * Below this many degrees of freedom a τ is left out of `allanDeviation`: the 68% interval's upper
 * end passes 2.4× the estimate at edf 2 and 5× at edf 1, which is where the longest τ (T/2, one
 * independent second difference) always sits.
 */
export const MIN_EDF = 2;

/**
 * Equivalent degrees of freedom of the overlapping Allan variance at averaging factor m from N
 * phase points (N − 1 frequency values) for white FM noise: the simple approximation of Howe, Allan
 * & Barnes (1981) in NIST SP 1065 sec. 5.3 (table of edf, from memory). Overlapping differences are
 * strongly correlated, so edf falls from about 2N/3 at m = 1 to about 1 at m = N/2, far below the
 * number of terms. Other noise types (the drift that turns a curve up) have fewer edf still.
 */
export function whiteFmEdf(phasePoints: number, m: number): number {
  const n = phasePoints;
  return ((3 * (n - 1)) / (2 * m) - (2 * (n - 2)) / n) * ((4 * m * m) / (4 * m * m + 5));
}

/**
 * Allan deviation at one averaging factor m over one or more contiguous stretches of `y` (one value
 * per bin of length tau0 s): second differences never span the gap between two stretches, and
 * the stretches' sums, terms and edf are pooled (independent stretches add their edf).
 * Overlapping: AVAR = Σ(x_{i+2m} − 2x_{i+m} + x_i)²/(2m²·terms) with x the running sum of y;
 * non-overlapping: block means ȳ_k of m values, AVAR = Σ(ȳ_{k+1} − ȳ_k)²/(2·terms).
 */
export function allanAt(stretches: readonly ArrayLike<number>[], tau0: number, m: number, overlapping = true): AllanPoint | null {
  let sum = 0;
  let terms = 0;
  let edf = 0;
  for (const y of stretches) {
    const n = y.length;
    if (n < 2 * m) continue;
    const x = runningSum(y);
    if (overlapping) {
      for (let i = 0; i + 2 * m <= n; i++) {
        const d = ((x[i + 2 * m] as number) - 2 * (x[i + m] as number) + (x[i] as number)) / m;
        sum += d * d;
        terms++;
      }
      edf += whiteFmEdf(n + 1, m);
    } else {
      const blocks = Math.floor(n / m);
      for (let k = 0; k + 1 < blocks; k++) {
        const d = ((x[(k + 2) * m] as number) - 2 * (x[(k + 1) * m] as number) + (x[k * m] as number)) / m;
        sum += d * d;
        terms++;
      }
      // Non-overlapping differences are those of the block means at m = 1.
      edf += whiteFmEdf(blocks + 1, 1);
    }
  }
  if (terms === 0) return null;
  const adev = Math.sqrt(sum / (2 * terms));
  return {
    tau: m * tau0,
    adev,
    err: adev / Math.sqrt(2 * edf),
    lo: adev * Math.sqrt(edf / chiSquareQuantile(ONE_SIGMA_CL, edf)),
    hi: adev * Math.sqrt(edf / chiSquareQuantile(1 - ONE_SIGMA_CL, edf)),
    edf,
    terms,
  };
}

/** Allan deviation at τ = τ₀·2^k for every k with at least MIN_EDF degrees of freedom. */
export function allanDeviation(stretches: readonly ArrayLike<number>[], tau0: number, options: { overlapping?: boolean } = {}): AllanPoint[] {
  if (!(tau0 > 0)) throw new RangeError(`bin width must be positive, got ${tau0} s`);
  const longest = Math.max(0, ...stretches.map((s) => s.length));
  const out: AllanPoint[] = [];
  for (let m = 1; 2 * m <= longest; m *= 2) {
    const p = allanAt(stretches, tau0, m, options.overlapping ?? true);
    if (p && p.edf >= MIN_EDF) out.push(p);
  }
  return out;
}

/**
 * The Allan deviation at averaging factor m that white noise alone gives, from each value's own
 * variance (`variances`, stretch by stretch as the values went to allanDeviation; overlapping
 * terms, as allanAt's default): a term's second difference (S₂ − S₁)/m of two adjacent sums of m
 * independent values has variance Σv_j/m² over its 2m values, so E[AVAR] = ⟨Σ_{2m} v_j⟩/(2m²)
 * over the terms. With one variance v throughout that is v/m: for white FM noise the Allan
 * variance is the ordinary variance of the τ-averages (Riley, NIST SP 1065 (2008), sec. 5.2 and
 * its table of τ slopes, section from memory; Barnes et al., NBS Tech. Note 394 (1971)).
 * For Poisson counts n_j read as rates n_j/τ₀ the variance is the mean (Poisson), v_j = R_j/τ₀,
 * so at a steady rate R this is √(R/τ); at a rate that differs from stretch to stretch (two holds
 * on different slopes of the fringe) it is what the counting noise of those rates gives. Null
 * without a term.
 */
export function whiteNoiseFloor(variances: readonly ArrayLike<number>[], m: number): number | null {
  let sum = 0;
  let terms = 0;
  for (const v of variances) {
    const n = v.length;
    if (n < 2 * m) continue;
    const x = runningSum(v);
    for (let i = 0; i + 2 * m <= n; i++) {
      sum += (x[i + 2 * m] as number) - (x[i] as number);
      terms++;
    }
  }
  return terms === 0 ? null : Math.sqrt(sum / (2 * m * m * terms));
}

/** x_0 = 0, x_{i+1} = x_i + y_i: sums over any run of values as one difference. */
function runningSum(y: ArrayLike<number>): Float64Array {
  const x = new Float64Array(y.length + 1);
  for (let i = 0; i < y.length; i++) x[i + 1] = (x[i] as number) + (y[i] as number);
  return x;
}
