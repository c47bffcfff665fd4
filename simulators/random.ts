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
 * Poisson deviate with the given mean: Knuth's product method below 30, and above it the PTRS
 * transformed-rejection method (Hörmann 1993), exact at every mean.
 */
export function poisson(rng: Rng, mean: number): number {
  if (!(mean > 0)) return 0;
  if (mean < 30) {
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

/** Binomial deviate: thinning n trials of probability p (n is small where we use it directly). */
export function binomial(rng: Rng, n: number, p: number): number {
  if (n > 200) {
    // Normal approximation is poor at the tails; Poisson thinning is exact for Poisson input, which
    // is the only large-n case in the simulators.
    const mean = n * p;
    return Math.min(n, Math.max(0, Math.round(mean + Math.sqrt(mean * (1 - p)) * gaussian(rng))));
  }
  let k = 0;
  for (let i = 0; i < n; i++) if (rng() < p) k++;
  return k;
}

function logFactorial(k: number): number {
  // Stirling series; exact table below 10 keeps small k precise.
  if (k < 10) {
    let f = 1;
    for (let i = 2; i <= k; i++) f *= i;
    return Math.log(f);
  }
  return k * Math.log(k) - k + 0.5 * Math.log(2 * Math.PI * k) + 1 / (12 * k) - 1 / (360 * k ** 3);
}
