// Special functions the statistics need, written here so the engine has no runtime dependencies:
// log-gamma, the regularized incomplete gamma functions and their inverse (chi-square and Poisson
// quantiles), and the normal distribution function built on them.

/** Relative accuracy the iterative series and continued fractions stop at. */
const EPS = 1e-15;
/** Floor that keeps the Lentz continued fraction away from division by zero. */
const TINY = 1e-300;
const MAX_ITER = 1000;

// Lanczos approximation, g = 7, nine terms: ~1e-15 relative accuracy for real arguments.
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

/** ln Γ(x) for x > 0 (reflection below ½ keeps the Lanczos sum in its accurate range). */
export function lnGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - lnGamma(1 - x);
  const z = x - 1;
  let sum = LANCZOS[0] as number;
  for (let i = 1; i < LANCZOS.length; i++) sum += (LANCZOS[i] as number) / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(sum);
}

/** ln of the common prefactor x^a e^(−x) / Γ(a). */
function logPrefactor(a: number, x: number): number {
  return a * Math.log(x) - x - lnGamma(a);
}

/** Series for P(a, x); converges fast for x < a + 1. */
function gammaPSeries(a: number, x: number): number {
  let term = 1 / a;
  let sum = term;
  for (let n = 1; n < MAX_ITER; n++) {
    term *= x / (a + n);
    sum += term;
    if (Math.abs(term) < Math.abs(sum) * EPS) break;
  }
  return sum * Math.exp(logPrefactor(a, x));
}

/** Continued fraction (modified Lentz) for Q(a, x); converges fast for x ≥ a + 1. */
function gammaQContinuedFraction(a: number, x: number): number {
  let b = x + 1 - a;
  let c = 1 / TINY;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < MAX_ITER; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < TINY) d = TINY;
    c = b + an / c;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < EPS) break;
  }
  return Math.exp(logPrefactor(a, x)) * h;
}

/** Regularized lower incomplete gamma P(a, x) = γ(a, x)/Γ(a), a > 0, x ≥ 0. */
export function gammaP(a: number, x: number): number {
  if (!(a > 0) || !(x >= 0)) return Number.NaN;
  if (x === 0) return 0;
  if (x === Number.POSITIVE_INFINITY) return 1;
  return x < a + 1 ? gammaPSeries(a, x) : 1 - gammaQContinuedFraction(a, x);
}

/** Regularized upper incomplete gamma Q(a, x) = 1 − P(a, x), computed directly in the tail. */
export function gammaQ(a: number, x: number): number {
  if (!(a > 0) || !(x >= 0)) return Number.NaN;
  if (x === 0) return 1;
  if (x === Number.POSITIVE_INFINITY) return 0;
  return x < a + 1 ? 1 - gammaPSeries(a, x) : gammaQContinuedFraction(a, x);
}

/**
 * Inverse of P(a, ·): the x with P(a, x) = p. Start from the Wilson–Hilferty cube (a > 1) or the
 * small-a power law, then Halley steps on P, the scheme of Numerical Recipes 3rd ed. §6.2.1.
 */
export function gammaPInv(p: number, a: number): number {
  if (!(a > 0) || !(p >= 0 && p <= 1)) return Number.NaN;
  if (p === 0) return 0;
  if (p === 1) return Number.POSITIVE_INFINITY;
  const a1 = a - 1;
  const gln = lnGamma(a);
  const lna1 = a > 1 ? Math.log(a1) : 0;
  const afac = a > 1 ? Math.exp(a1 * (lna1 - 1) - gln) : 0;
  let x: number;
  if (a > 1) {
    const pp = p < 0.5 ? p : 1 - p;
    const t = Math.sqrt(-2 * Math.log(pp));
    let z = (2.30753 + t * 0.27061) / (1 + t * (0.99229 + t * 0.04481)) - t;
    if (p < 0.5) z = -z;
    x = Math.max(1e-3, a * (1 - 1 / (9 * a) - z / (3 * Math.sqrt(a))) ** 3);
  } else {
    const t = 1 - a * (0.253 + a * 0.12);
    x = p < t ? (p / t) ** (1 / a) : 1 - Math.log(1 - (p - t) / (1 - t));
  }
  for (let j = 0; j < 100; j++) {
    if (x <= 0) return 0;
    // Work with the smaller tail so the residual keeps its relative precision.
    const err = p < 0.5 ? gammaP(a, x) - p : 1 - p - gammaQ(a, x);
    const density = a > 1 ? afac * Math.exp(-(x - a1) + a1 * (Math.log(x) - lna1)) : Math.exp(-x + a1 * Math.log(x) - gln);
    if (density === 0) break;
    const u = err / density;
    const step = u / (1 - 0.5 * Math.min(1, u * (a1 / x - 1)));
    x -= step;
    if (x <= 0) x = 0.5 * (x + step);
    if (Math.abs(step) < 1e-14 * x) break;
  }
  return x;
}

/** Chi-square distribution function with k degrees of freedom. */
export function chiSquareCdf(x: number, k: number): number {
  return x <= 0 ? 0 : gammaP(k / 2, x / 2);
}

/** Upper tail Pr(χ²_k ≥ x): the p-value of a goodness-of-fit statistic. */
export function chiSquareSf(x: number, k: number): number {
  return x <= 0 ? 1 : gammaQ(k / 2, x / 2);
}

/** Quantile of the chi-square distribution with k degrees of freedom. */
export function chiSquareQuantile(p: number, k: number): number {
  return 2 * gammaPInv(p, k / 2);
}

/** Standard normal distribution function Φ(z), via erf(z/√2) = P(½, z²/2). */
export function normalCdf(z: number): number {
  const half = 0.5 * gammaQ(0.5, (z * z) / 2);
  return z >= 0 ? 1 - half : half;
}

/** Φ(1): the one-sided confidence level of a "1σ" limit (≈ 0.8413447460685429). */
export const ONE_SIGMA_CL = normalCdf(1);
