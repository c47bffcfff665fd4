// Small dense symmetric solves for the fits (at most a handful of parameters), on row-major
// Float64Arrays. Jacobi scaling first: fit parameters differ by ten orders of magnitude in scale
// (amplitudes in counts per bin against a visibility below 1).

/**
 * Solve M·x = b for symmetric positive-definite M (n×n, row-major) by scaled Cholesky.
 * Returns null when M is not positive definite.
 */
export function solveSymmetric(m: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const inv = inverseSymmetric(m, n);
  if (!inv) return null;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += (inv[i * n + j] as number) * (b[j] as number);
    x[i] = s;
  }
  return x;
}

/** Inverse of a symmetric positive-definite matrix (row-major), or null if it is not one. */
export function inverseSymmetric(m: Float64Array, n: number): Float64Array | null {
  const d = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const v = m[i * n + i] as number;
    if (!(v > 0)) return null;
    d[i] = 1 / Math.sqrt(v);
  }
  // Cholesky factor L of the scaled matrix D·M·D.
  const l = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = (m[i * n + j] as number) * (d[i] as number) * (d[j] as number);
      for (let k = 0; k < j; k++) s -= (l[i * n + k] as number) * (l[j * n + k] as number);
      if (i === j) {
        if (!(s > 1e-14)) return null;
        l[i * n + i] = Math.sqrt(s);
      } else {
        l[i * n + j] = s / (l[j * n + j] as number);
      }
    }
  }
  // Invert L (lower triangular), then (DMD)⁻¹ = L⁻ᵀL⁻¹ and M⁻¹ = D·(DMD)⁻¹·D.
  const li = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    li[i * n + i] = 1 / (l[i * n + i] as number);
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= (l[i * n + k] as number) * (li[k * n + j] as number);
      li[i * n + j] = s / (l[i * n + i] as number);
    }
  }
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = i; k < n; k++) s += (li[k * n + i] as number) * (li[k * n + j] as number);
      const v = s * (d[i] as number) * (d[j] as number);
      out[i * n + j] = v;
      out[j * n + i] = v;
    }
  }
  return out;
}
