// Allan deviation of a rate or phase series sampled every τ₀ (IEEE Std 1139-2008; Riley, Handbook
// of Frequency Stability Analysis, NIST SP 1065 (2008), ch. 5). For counts, white Poisson noise
// gives σ(τ) = √(R/τ): the τ^(−1/2) slope; drifts turn the curve up at long τ.

export interface AllanPoint {
  /** Averaging time, s. */
  tau: number;
  /** Allan deviation, in the unit of the series. */
  adev: number;
  /**
   * Simple 1σ error estimate adev/√(number of terms) (NIST SP 1065's "simple confidence
   * interval", from memory): a guide to the scatter, not an exact χ² interval.
   */
  err: number;
  /** Number of second differences averaged. */
  terms: number;
}

/**
 * Allan deviation of `y` (one value per bin of length tau0 s) at a single averaging factor m.
 * Overlapping: AVAR = Σ(x_{i+2m} − 2x_{i+m} + x_i)²/(2m²(N − 2m + 1)) with x the running sum of y;
 * non-overlapping: block means ȳ_k of m values, AVAR = Σ(ȳ_{k+1} − ȳ_k)²/(2(M − 1)).
 */
export function allanAt(y: ArrayLike<number>, tau0: number, m: number, overlapping = true): AllanPoint | null {
  const n = y.length;
  const x = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) x[i + 1] = (x[i] as number) + (y[i] as number);
  let sum = 0;
  let terms = 0;
  if (overlapping) {
    for (let i = 0; i + 2 * m <= n; i++) {
      const d = (x[i + 2 * m] as number) - 2 * (x[i + m] as number) + (x[i] as number);
      sum += d * d;
      terms++;
    }
    if (terms === 0) return null;
    sum /= m * m;
  } else {
    const blocks = Math.floor(n / m);
    for (let k = 0; k + 1 < blocks; k++) {
      const d = ((x[(k + 2) * m] as number) - 2 * (x[(k + 1) * m] as number) + (x[k * m] as number)) / m;
      sum += d * d;
      terms++;
    }
    if (terms === 0) return null;
  }
  const adev = Math.sqrt(sum / (2 * terms));
  return { tau: m * tau0, adev, err: adev / Math.sqrt(terms), terms };
}

/** Allan deviation at τ = τ₀·2^k for every k the series supports. */
export function allanDeviation(y: ArrayLike<number>, tau0: number, options: { overlapping?: boolean } = {}): AllanPoint[] {
  if (!(tau0 > 0)) throw new RangeError(`bin width must be positive, got ${tau0} s`);
  const out: AllanPoint[] = [];
  for (let m = 1; 2 * m <= y.length; m *= 2) {
    const p = allanAt(y, tau0, m, options.overlapping ?? true);
    if (p) out.push(p);
  }
  return out;
}
