// Principal branch W₀ of the Lambert W function (w·e^w = x), needed to invert the paralyzable
// dead-time model m = n·e^(−nτ).

/** Smallest argument of the real branches: −1/e. */
export const BRANCH_POINT = -1 / Math.E;

/** W₀(x) for x ≥ −1/e; NaN below the branch point. Halley iteration from a branch-aware start. */
export function lambertW0(x: number): number {
  if (Number.isNaN(x) || x < BRANCH_POINT) return Number.NaN;
  if (x === 0) return 0;
  if (x === Number.POSITIVE_INFINITY) return x;
  let w: number;
  if (x < -0.25) {
    // Series about the branch point in p = √(2(e·x + 1)): accurate where Halley converges slowly.
    const p = Math.sqrt(Math.max(0, 2 * (Math.E * x + 1)));
    w = -1 + p - (p * p) / 3 + (11 / 72) * p * p * p;
  } else if (x < Math.E) {
    w = Math.log1p(x);
  } else {
    const l = Math.log(x);
    w = l - Math.log(l);
  }
  if (w === -1) return w;
  for (let i = 0; i < 50; i++) {
    const ew = Math.exp(w);
    const f = w * ew - x;
    const wp1 = w + 1;
    if (wp1 === 0) break;
    const step = f / (ew * wp1 - ((w + 2) * f) / (2 * wp1));
    w -= step;
    if (!(Math.abs(step) > 1e-15 * (1 + Math.abs(w)))) break;
  }
  return w;
}
