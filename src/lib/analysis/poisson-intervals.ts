// Exact (Garwood 1936) confidence limits for a Poisson count: what the screen shows at low rates
// (0.1 counts/s and below), where √n error bars are wrong and go negative.
import { gammaPInv, ONE_SIGMA_CL } from './special-functions.ts';

export interface PoissonInterval {
  /** Observed count. */
  n: number;
  /** Lower limit on the mean (0 for n = 0). */
  lower: number;
  /** Upper limit on the mean. */
  upper: number;
  /** One-sided confidence level of each limit. */
  cl: number;
}

/**
 * Garwood limits on the Poisson mean for n observed counts at one-sided confidence `cl`
 * (default Φ(1), the "1σ" limits of Gehrels 1986): lower ½χ²_(1−cl)(2n), upper ½χ²_cl(2n+2).
 * ½χ²_p(2k) is the gamma quantile with shape k, so no factor of 2 appears below.
 */
export function garwoodInterval(n: number, cl: number = ONE_SIGMA_CL): PoissonInterval {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`count must be a non-negative integer, got ${n}`);
  if (!(cl > 0 && cl < 1)) throw new RangeError(`confidence level must be in (0, 1), got ${cl}`);
  return { n, lower: n === 0 ? 0 : gammaPInv(1 - cl, n), upper: gammaPInv(cl, n + 1), cl };
}

/** Garwood limits expressed as rates (counts per second) for n counts in `seconds`. */
export function garwoodRateInterval(n: number, seconds: number, cl: number = ONE_SIGMA_CL): PoissonInterval {
  if (!(seconds > 0)) throw new RangeError(`exposure must be positive, got ${seconds} s`);
  const counts = garwoodInterval(n, cl);
  return { n, lower: counts.lower / seconds, upper: counts.upper / seconds, cl };
}
