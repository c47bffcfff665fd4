// The null distribution of the Baker–Cousins deviance D = Σ d(n_i, μ_i), d(n, μ) = 2[μ − n + n ln(n/μ)]
// (Baker & Cousins, Nucl. Instrum. Methods 221, 437 (1984)), for goodness-of-fit p-values that
// hold at low counts. D is χ²(dof) only when every μ is large: a bin's d has mean 1.15 at one or
// two counts and 0.47 at 0.1, against χ²₁'s 1, so χ²(dof) calls a correct model poor three times
// as often as it should at two counts per bin and never at half a count. Instead each bin's exact
// mean and variance of d under n ~ Poisson(μ) are summed, as Kaastra (A&A 605, A51 (2017), from
// memory) does for the C-statistic with fitted approximations where we sum exactly, and D is
// matched to a scaled χ² by its mean and variance (Satterthwaite, Biometrics Bull. 2, 110 (1946);
// Welch, Biometrika 34, 28 (1947); both from memory).
import { chiSquareSf } from './special-functions.ts';

export interface DevianceMoments {
  mean: number;
  variance: number;
  /**
   * d(mean)/dμ, which is also Cov(d, n)/μ: how far a bin's d follows its count. A fit moves its μ
   * with the counts, so this says how much of D's spread the fitted parameters absorb.
   */
  slope: number;
  /**
   * d²(mean)/dμ²: a fit's μ scatter about the truth, and the mean taken at them is off by
   * ½·curvature·Var(μ) on average (second-order delta method).
   */
  curvature: number;
}

/**
 * Summation stops where d(n, μ) exceeds this. By the Chernoff bound Pr(N ≥ n) ≤ e^(−d(n,μ)/2) for
 * n ≥ μ and Pr(N ≤ n) ≤ e^(−d(n,μ)/2) for n ≤ μ, so each tail left out holds less than e^(−50)
 * ≈ 2e-22 of the probability; the test compares with sums run far past it.
 */
const D_STOP = 100;

/** One bin's term d(n, μ), with 0·ln 0 = 0. */
export function binDeviance(n: number, mu: number): number {
  return n > 0 ? 2 * (mu - n + n * Math.log(n / mu)) : 2 * mu;
}

/**
 * Adds the term of count n (relative probability w) to the sums of w, w·d, w·d², w·d·(n − μ) and
 * w·d·[(n − μ)² − n]; returns its d, for the stopping rule. Top level rather than a closure per
 * call: the table is built from thousands of these sums.
 */
function addTerm(sums: Float64Array, n: number, mu: number, w: number): number {
  const d = binDeviance(n, mu);
  sums[0]! += w;
  sums[1]! += w * d;
  sums[2]! += w * d * d;
  sums[3]! += w * d * (n - mu);
  sums[4]! += w * d * ((n - mu) ** 2 - n);
  return d;
}

/**
 * Moments of d(n, μ) under n ~ Poisson(μ), summed outward from the mode (where d is smallest)
 * until d passes D_STOP on each side. Probabilities are kept relative to the mode's and normalised
 * by their sum, so no factorial or ln Γ enters.
 */
export function devianceTermMomentsExact(mu: number): DevianceMoments {
  if (!(mu > 0)) return { mean: 0, variance: 0, slope: 0, curvature: 0 };
  const mode = Math.floor(mu);
  const sums = new Float64Array(5);
  for (let n = mode, w = 1; addTerm(sums, n, mu, w) <= D_STOP; n++) w *= mu / (n + 1);
  for (let n = mode - 1, w = 1; n >= 0; n--) {
    w *= (n + 1) / mu;
    if (addTerm(sums, n, mu, w) > D_STOP) break;
  }
  const [s0, s1, s2, sn, sc] = sums as unknown as [number, number, number, number, number];
  // With ∂P/∂μ = P·(n/μ − 1) and ∂d/∂μ = 2(1 − n/μ), whose mean is 0:
  // E' = Σ P·d·(n − μ)/μ and E'' = Σ P·d·[(n − μ)² − n]/μ² − 2/μ.
  const mean = s1 / s0;
  return { mean, variance: s2 / s0 - mean * mean, slope: sn / (s0 * mu), curvature: sc / (s0 * mu * mu) - 2 / mu };
}

/**
 * From this μ on, a bin's d has mean 1 and variance 2 (χ²₁'s) to within 1e-4 and 4e-4, and a
 * slope under 1e-7 (the sums fall as about 1/(6μ), 2/(3μ) and 1/(6μ²), checked in the test).
 * Over the largest pass (2,000 points, two outputs) the mean's excess is then below 0.005 of the
 * deviance's standard deviation, which moves a p of 0.01 by about 1 % of itself.
 */
export const ASYMPTOTIC_MU = 2000;
/** Below this μ the exact sum needs at most about 14 terms and is used directly. */
const TABLE_MU_MIN = 0.01;
/**
 * Table step in ln μ. Four-point Lagrange interpolation at this step stays within 1e-6 of the
 * exact mean and 1e-5 of the exact variance and slope (checked in the test), where a per-bin error
 * of 1e-4 would still move the largest pass's deviance by under 0.005 of its standard deviation.
 */
const TABLE_STEP = 1 / 16;

interface Table {
  /** ln μ of node 0, which lies one step below TABLE_MU_MIN so every cell has a node either side. */
  t0: number;
  mean: Float64Array;
  variance: Float64Array;
  slope: Float64Array;
  curvature: Float64Array;
}

let table: Table | null = null;

/** Built on first use (about 8 ms): the exact sums cost up to 1,300 terms each near ASYMPTOTIC_MU. */
function momentsTable(): Table {
  if (table) return table;
  const t0 = Math.log(TABLE_MU_MIN) - TABLE_STEP;
  const nodes = Math.ceil((Math.log(ASYMPTOTIC_MU) - t0) / TABLE_STEP) + 3;
  const mean = new Float64Array(nodes);
  const variance = new Float64Array(nodes);
  const slope = new Float64Array(nodes);
  const curvature = new Float64Array(nodes);
  for (let j = 0; j < nodes; j++) {
    const m = devianceTermMomentsExact(Math.exp(t0 + j * TABLE_STEP));
    mean[j] = m.mean;
    variance[j] = m.variance;
    slope[j] = m.slope;
    curvature[j] = m.curvature;
  }
  table = { t0, mean, variance, slope, curvature };
  return table;
}

/**
 * Moments of d(n, μ) for a fit's expected count μ: exact below TABLE_MU_MIN, χ²₁'s from
 * ASYMPTOTIC_MU on, interpolated in ln μ from the exact sums between. Runs once per bin of every
 * fit, so written without closures (tsx wraps each in a naming call).
 */
export function devianceTermMoments(mu: number): DevianceMoments {
  if (mu < TABLE_MU_MIN) return devianceTermMomentsExact(mu);
  if (mu >= ASYMPTOTIC_MU) return { mean: 1, variance: 2, slope: 0, curvature: 0 };
  const { t0, mean, variance, slope, curvature } = momentsTable();
  const x = (Math.log(mu) - t0) / TABLE_STEP;
  const j = Math.floor(x);
  const s = x - j;
  // Lagrange weights on nodes j − 1 … j + 2, s ∈ [0, 1) from node j.
  const wm = (-s * (s - 1) * (s - 2)) / 6;
  const w0 = ((s + 1) * (s - 1) * (s - 2)) / 2;
  const w1 = (-(s + 1) * s * (s - 2)) / 2;
  const w2 = ((s + 1) * s * (s - 1)) / 6;
  return {
    mean: wm * (mean[j - 1] as number) + w0 * (mean[j] as number) + w1 * (mean[j + 1] as number) + w2 * (mean[j + 2] as number),
    variance: wm * (variance[j - 1] as number) + w0 * (variance[j] as number) + w1 * (variance[j + 1] as number) + w2 * (variance[j + 2] as number),
    slope: wm * (slope[j - 1] as number) + w0 * (slope[j] as number) + w1 * (slope[j + 1] as number) + w2 * (slope[j + 2] as number),
    curvature: wm * (curvature[j - 1] as number) + w0 * (curvature[j] as number) + w1 * (curvature[j + 1] as number) + w2 * (curvature[j + 2] as number),
  };
}

/**
 * Pr(D ≥ dev) for a deviance whose null distribution has the given mean and variance, read as a·χ²_ν
 * with the same two moments: a = variance/(2·mean), ν = 2·mean²/variance. With mean = dof and
 * variance = 2·dof (every μ large) this is χ²(dof) itself. Without a positive mean and variance the
 * counts are too few for the deviance to judge anything, and p is 1.
 */
export function devianceSf(dev: number, mean: number, variance: number): number {
  if (!(mean > 0 && variance > 0)) return 1;
  const a = variance / (2 * mean);
  return chiSquareSf(dev / a, (2 * mean * mean) / variance);
}
