// Seeded randomness for the simulators and the tests' synthetic data: the same seed gives the same
// clicks on every machine, so a failing check can be replayed.

export type Rng = () => number;

/** mulberry32: a small, fast 32-bit generator; plenty for Monte-Carlo photon counts. */
export function mulberry32(seed: number): Rng {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviate (Box–Muller). */
export function gaussian(rng: Rng): number {
  let u = 0;
  while (u === 0) u = rng();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

/**
 * Poisson deviate with the given mean: Knuth's product method below 10 (at most ~11 uniforms on
 * average), and from 10 up the PTRS transformed-rejection method (Hörmann 1993, valid for
 * mean ≥ 10), exact at every mean.
 */
export function poisson(rng: Rng, mean: number): number {
  if (!(mean > 0)) return 0;
  if (mean < 10) {
    const limit = Math.exp(-mean);
    let k = 0;
    let p = rng();
    while (p > limit) {
      k++;
      p *= rng();
    }
    return k;
  }
  const slam = Math.sqrt(mean);
  const loglam = Math.log(mean);
  const b = 0.931 + 2.53 * slam;
  const a = -0.059 + 0.02483 * b;
  const invalpha = 1.1239 + 1.1328 / (b - 3.4);
  const vr = 0.9277 - 3.6224 / (b - 2);
  for (;;) {
    const u = rng() - 0.5;
    const v = rng();
    const us = 0.5 - Math.abs(u);
    const k = Math.floor(((2 * a) / us + b) * u + mean + 0.43);
    if (us >= 0.07 && v <= vr) return k;
    if (k < 0 || (us < 0.013 && v > us)) continue;
    if (Math.log(v) + Math.log(invalpha) - Math.log(a / (us * us) + b) <= -mean + k * loglam - logFactorial(k)) return k;
  }
}

/**
 * Binomial deviate (successes in n trials of probability p), exact at every n: inversion by
 * sequential search while n·min(p, 1−p) < 10, otherwise the BTRS transformed-rejection method
 * (Hörmann 1993, the binomial sibling of PTRS above, valid for n·p ≥ 10).
 */
export function binomial(rng: Rng, n: number, p: number): number {
  if (!(n >= 1) || !(p > 0)) return 0;
  if (p >= 1) return n;
  if (p > 0.5) return n - binomial(rng, n, 1 - p);
  const q = 1 - p;
  if (n * p < 10) {
    // pmf recurrence f(k) = f(k−1)·((n+1)/k − 1)·p/q from f(0) = qⁿ, which is ≥ e^(−20) here
    // (n·p < 10, p ≤ ½), so it never underflows.
    const s = p / q;
    const a = (n + 1) * s;
    for (;;) {
      let r = q ** n;
      let u = rng();
      let k = 0;
      while (u > r && k <= n) {
        u -= r;
        k++;
        r *= a / k - s;
      }
      // Rounding can exhaust the pmf before u; draw again rather than return an impossible k.
      if (k <= n) return k;
    }
  }
  const spq = Math.sqrt(n * p * q);
  const b = 1.15 + 2.53 * spq;
  const a = -0.0873 + 0.0248 * b + 0.01 * p;
  const c = n * p + 0.5;
  const vr = 0.92 - 4.2 / b;
  const alpha = (2.83 + 5.1 / b) * spq;
  const lpq = Math.log(p / q);
  const m = Math.floor((n + 1) * p);
  const logFm = logFactorial(m) + logFactorial(n - m);
  for (;;) {
    const u = rng() - 0.5;
    const v = rng();
    const us = 0.5 - Math.abs(u);
    const k = Math.floor(((2 * a) / us + b) * u + c);
    if (k < 0 || k > n) continue;
    if (us >= 0.07 && v <= vr) return k;
    // Accept when v under the hat lies below the pmf ratio f(k)/f(m).
    if (Math.log((v * alpha) / (a / (us * us) + b)) <= logFm - logFactorial(k) - logFactorial(n - k) + (k - m) * lpq) return k;
  }
}

function logFactorial(k: number): number {
  // Stirling series to 1/(1260 k⁵) (error below 1e-11 from k = 10); exact product below 10.
  if (k < 10) {
    let f = 1;
    for (let i = 2; i <= k; i++) f *= i;
    return Math.log(f);
  }
  const k2 = k * k;
  return k * Math.log(k) - k + 0.5 * Math.log(2 * Math.PI * k) + (1 / 12 - (1 / 360 - 1 / (1260 * k2)) / k2) / k;
}
