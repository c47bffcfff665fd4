// Joint Poisson maximum-likelihood fit of both interferometer outputs over one monotonic pass:
//   N_a(x) = e·[A(1 + V cos θ) + d_a],  N_b(x) = e·[B(1 − V cos θ) + d_b],  θ = 2π(x + q·x²)/P + φ,
// with e each point's relative exposure (1 unless the points sum unequal numbers of bins), each
// seen through its detector's dead time where one is set (Knoll, Radiation Detection and
// Measurement, 4th ed., ch. 4: non-paralyzable m = n/(1 + nτ), paralyzable m = n·e^(−nτ)),
// minimising Cash's C = 2Σ(m − n ln m) (Cash, ApJ 228, 939 (1979)) by Levenberg–Marquardt on the
// Fisher-scoring Hessian with analytic derivatives. d_a, d_b are known dark counts per bin: fitted
// together with A, B and V the model would be degenerate.
import { countsThroughDeadTime, type DeadTimeModel } from './dead-time.ts';
import { fft } from './fft.ts';
import { FIT_WARNING } from './fit-warnings.ts';
import { inverseSymmetric, solveSymmetric } from './linear-algebra.ts';
import type { Measured } from './measured.ts';
import { binDeviance, devianceSf, devianceTermMoments } from './poisson-deviance.ts';
import { chiSquareQuantile } from './special-functions.ts';

export interface FringeData {
  /** Scan coordinate per bin (piezo volts, steps, …). */
  x: ArrayLike<number>;
  /** Counts per bin, output a (the output bright at θ = 0). */
  countsA: ArrayLike<number>;
  /** Counts per bin, output b. */
  countsB: ArrayLike<number>;
  /**
   * Relative exposure of each point (the bins summed into it over their mean, say); the expected
   * counts scale with it, so points of 2 and 3 bins fit one fringe. Absent: all equal.
   */
  exposure?: ArrayLike<number>;
}

export type IntervalMethod = 'fisher' | 'profile';

/** A detector's dead time over an interval: τ over the interval's length (a point's mean duration for the fit), and the model. */
export interface DeadTimeTerm {
  tauOver: number;
  model: DeadTimeModel;
}

export interface FringeFitOptions {
  /** Dark counts per bin of output a from the channel's calibration; absent when uncalibrated. */
  darkA?: number;
  /** Dark counts per bin of output b from the channel's calibration; absent when uncalibrated. */
  darkB?: number;
  /**
   * The outputs' dead times: the model's true counts pass through them, so a bright fringe's
   * flattened tops do not read as a lower visibility. Darks are then true (dead-time-free) counts.
   */
  deadTimeA?: DeadTimeTerm;
  deadTimeB?: DeadTimeTerm;
  /** Fit the quadratic piezo term q as well. */
  quadratic?: boolean;
  /** Expected period, x units (e.g. the last fit): the start search looks within a factor 1.5. */
  periodHint?: number;
  /**
   * 'auto' (default) uses the profile likelihood where the quadratic approximation is doubtful:
   * the Fisher interval within 3σ of V = 0 or 1, or fewer than LOW_COUNT_TOTAL counts.
   */
  interval?: 'auto' | IntervalMethod;
}

/** Fringe detection at "3σ": the chance that flat outputs pass as a fringe, 0.27 %. */
const FRINGE_DETECTION_P = 0.0027;

/**
 * Threshold on ΔC = C(flat) − C(fit) for calling a fringe. Without the period search, ΔC of flat
 * outputs follows χ² with as many degrees of freedom as the fringe adds (V, phase, period, and the
 * quadratic term when fitted): 14.16 or 16.25 at 99.73 %. Searching `cycles` independent periods
 * is as many tries (the trials factor of the look-elsewhere effect, Gross & Vitells, Eur. Phys. J.
 * C 70, 525 (2010)); a χ² tail falling as e^(−ΔC/2) then needs 2·ln(cycles) more. Checked by
 * Monte Carlo of this fitter on flat Poisson passes (quadratic, 30–2,000 points, 300–1,000 each):
 * 99.73 % points 20.3, 20.8, 24.7, 25.6, 26.0 at 30, 60, 250, 500, 2,000 points, against 20.3,
 * 21.7, 24.5, 25.9, 25.9 here; the test repeats it at 400 points.
 */
export function fringeDetectionThreshold(cycles: number, quadratic: boolean): number {
  return chiSquareQuantile(1 - FRINGE_DETECTION_P, quadratic ? 4 : 3) + 2 * Math.log(Math.max(1, cycles));
}

/**
 * A fit whose goodness of fit has p below this has its uncertainties scaled by the Birge ratio
 * √(deviance/expected deviance) (Birge, Phys. Rev. 40, 207 (1932): √(χ²/dof), the scale factor S
 * of the Particle Data Group's averages; the expected deviance is the dof at high counts): at high
 * counts the model misses structure beyond Poisson noise (drift during the pass, piezo
 * nonlinearity past the quadratic term, dead time), the Poisson errors alone understate how far
 * the result may lie from the truth, and the scatter between passes shows it. An acceptable fit
 * keeps its Poisson errors.
 */
export const ERROR_SCALE_P = 0.01;

/** Below this many net counts in a pass (both outputs) the profile interval is used by default. */
export const LOW_COUNT_TOTAL = 10_000;

export interface VisibilityEstimate {
  value: number;
  /** 1σ: Fisher σ, or half the profile interval's width. */
  err: number;
  /** 68.27% interval (ΔC = 1), clipped to [0, 1]. */
  lower: number;
  upper: number;
  method: IntervalMethod;
}

export interface OutputVisibility {
  /** This output's own visibility with the joint fit's phase held fixed, no dark subtraction. */
  raw: Measured;
  /** Same with the dark offsets; null when uncalibrated. */
  net: Measured | null;
}

export interface FringeFit {
  ok: true;
  /** Raw visibility: the fit with no dark offsets, what the counts themselves show. */
  visibility: VisibilityEstimate;
  /** Net visibility with the calibrated dark counts as offsets; null when uncalibrated. */
  visibilityNet: VisibilityEstimate | null;
  /** Which visibility a screen should headline: net where a dark calibration exists. */
  shown: 'raw' | 'net';
  /** Fringe period, x units. */
  period: Measured;
  /** Phase φ at x = 0, rad in (−π, π]. */
  phase: Measured;
  /** Phase θ at the middle of the pass, rad in (−π, π]: less correlated with the period than φ. */
  phaseAtCenter: Measured;
  /** Middle of the pass, x units. */
  center: number;
  /** Quadratic coefficient q, 1/x units; null when not fitted. */
  quadratic: Measured | null;
  /** A and B: mean signal counts per bin of each output (excluding the dark offsets of the shown fit). */
  amplitudeA: Measured;
  amplitudeB: Measured;
  outputs: { a: OutputVisibility; b: OutputVisibility };
  counts: { a: number; b: number; bins: number };
  darkPerBin: { a: number; b: number } | null;
  /** The outputs' dead times the model saw its counts through (per point), as given. */
  deadTime: { a: DeadTimeTerm | null; b: DeadTimeTerm | null };
  /** Goodness of fit of the shown fit. */
  quality: {
    /** Cash statistic C = 2Σ(m − n ln m). */
    cash: number;
    /** Baker–Cousins deviance 2Σ[m − n + n ln(n/m)], asymptotically χ²(dof). */
    deviance: number;
    dof: number;
    /**
     * Mean deviance of a correct model's fit at these expected counts: the dof at high counts,
     * up to 15 % more near 1–2 counts per bin and less below half a count (poisson-deviance.ts).
     */
    expectedDeviance: number;
    /**
     * Pr(deviance this large or larger | the model): from the deviance's mean and variance at the
     * fitted counts, so it holds at low counts; Pr(χ²_dof ≥ deviance) at high counts.
     */
    pValue: number;
    iterations: number;
    converged: boolean;
    /**
     * Factor every uncertainty of this fit was multiplied by: √(deviance/expectedDeviance) when
     * the fit is poor (p < ERROR_SCALE_P), else 1. See ERROR_SCALE_P.
     */
    errorScale: number;
    /**
     * C(no fringe) − C(fit): how much the fringe improves on flat outputs. Below
     * `fringeThreshold` the "fringe" may be noise, and period, phase and the V interval
     * mean little (the period search makes the interval undercover near V = 0).
     */
    fringeDeltaCash: number;
    /** ΔC a fringe must reach in this fit's period search (fringeDetectionThreshold). */
    fringeThreshold: number;
  };
  /** Covariance of the shown fit's parameters, in the order of `names`. */
  covariance: { names: string[]; matrix: number[][] };
  warnings: string[];
}

export type FringeFitResult = FringeFit | { ok: false; reason: string };

// Parameter vector: amplitudes, visibility, then phase ψ, slope k and curvature κ of θ in the
// scaled coordinate u = (x − x_c)/s ∈ [−1, 1], which decorrelates phase from period.
const IA = 0;
const IB = 1;
const IV = 2;
const IPSI = 3;
const IK = 4;
const IKAPPA = 5;
const NP = 6;
const PARAM_NAMES = ['A', 'B', 'V', 'P', 'phi', 'q'];

interface Problem {
  u: Float64Array;
  na: Float64Array;
  nb: Float64Array;
  /** Relative exposure per point: the model's factor. */
  e: Float64Array;
  dtA: DeadTimeTerm | null;
  dtB: DeadTimeTerm | null;
  len: number;
  da: number;
  db: number;
  useA: boolean;
  useB: boolean;
}

/**
 * Measured counts per unit of exposure from true ones r through a dead time, and d(measured)/dr
 * (the chain-rule factor of every derivative); r itself without one.
 */
function throughDeadTime(r: number, t: DeadTimeTerm | null): [number, number] {
  if (!t) return [r, 1];
  const k = t.tauOver;
  const slope = t.model === 'paralyzable' ? Math.exp(-r * k) * (1 - r * k) : 1 / (1 + r * k) ** 2;
  return [countsThroughDeadTime(r, k, t.model), slope];
}

/** True counts per unit of exposure from measured ones, for start values: the non-paralyzable inverse, capped. */
function beforeDeadTime(m: number, t: DeadTimeTerm | null): number {
  return t ? m / Math.max(1e-3, 1 - m * t.tauOver) : m;
}

/** Smallest amplitude the fit may step to, counts per bin: keeps the model positive. */
const MIN_AMPLITUDE = 1e-9;
/**
 * Stop when the predicted decrease of C/2 (a log-likelihood, dimensionless) falls below this: the
 * parameters are then within about √(2·1e-6) ≈ 0.0014σ of the minimum, far inside any interval.
 */
const CONVERGED_DECREASE = 1e-6;
const MAX_ITERATIONS = 200;

interface Evaluation {
  cost: number;
  /** Gradient of C/2 over all NP parameters. */
  g: Float64Array;
  /** Fisher information Σ (∂m ∂mᵀ)/m, NP×NP row-major: the expected Hessian of C/2. */
  f: Float64Array;
}

/**
 * Cost, gradient and Fisher information in one pass over the bins (one cos/sin pair per bin).
 * The expected rather than the observed Hessian: positive definite, so every damped step descends.
 * Written out term by term: this loop is where a fit spends its time.
 */
function evaluate(pr: Problem, p: Float64Array): Evaluation {
  const A = p[IA] as number;
  const B = p[IB] as number;
  const V = p[IV] as number;
  const psi = p[IPSI] as number;
  const k = p[IK] as number;
  const kap = p[IKAPPA] as number;
  let c = 0;
  let g0 = 0, g1 = 0, g2 = 0, g3 = 0, g4 = 0, g5 = 0;
  let f00 = 0, f02 = 0, f03 = 0, f04 = 0, f05 = 0;
  let f11 = 0, f12 = 0, f13 = 0, f14 = 0, f15 = 0;
  let f22 = 0, f23 = 0, f24 = 0, f25 = 0, f33 = 0, f34 = 0, f35 = 0, f45 = 0, f55 = 0;
  let bad = false;
  for (let i = 0; i < pr.len; i++) {
    const u = pr.u[i] as number;
    const th = psi + u * (k + kap * u);
    const cs = Math.cos(th);
    const sn = Math.sin(th);
    const u2 = u * u;
    if (pr.useA) {
      const n = pr.na[i] as number;
      const [f, fp] = throughDeadTime(A * (1 + V * cs) + pr.da, pr.dtA);
      const e = pr.e[i] as number;
      const m = e * f;
      if (m > 0) {
        c += n > 0 ? m - n * Math.log(m) : m;
        const r = 1 - n / m;
        const w = 1 / m;
        const ef = e * fp;
        const d0 = ef * (1 + V * cs);
        const d2 = ef * A * cs;
        const d3 = -ef * A * V * sn;
        g0 += r * d0;
        g2 += r * d2;
        g3 += r * d3;
        g4 += r * d3 * u;
        g5 += r * d3 * u2;
        const w0 = w * d0;
        f00 += w0 * d0;
        f02 += w0 * d2;
        const w03 = w0 * d3;
        f03 += w03;
        f04 += w03 * u;
        f05 += w03 * u2;
        f22 += w * d2 * d2;
        const w23 = w * d2 * d3;
        f23 += w23;
        f24 += w23 * u;
        f25 += w23 * u2;
        const w33 = w * d3 * d3;
        f33 += w33;
        f34 += w33 * u;
        f35 += w33 * u2;
        f45 += w33 * u2 * u;
        f55 += w33 * u2 * u2;
      } else if (n > 0) bad = true;
    }
    if (pr.useB) {
      const n = pr.nb[i] as number;
      const [f, fp] = throughDeadTime(B * (1 - V * cs) + pr.db, pr.dtB);
      const e = pr.e[i] as number;
      const m = e * f;
      if (m > 0) {
        c += n > 0 ? m - n * Math.log(m) : m;
        const r = 1 - n / m;
        const w = 1 / m;
        const ef = e * fp;
        const d1 = ef * (1 - V * cs);
        const d2 = -ef * B * cs;
        const d3 = ef * B * V * sn;
        g1 += r * d1;
        g2 += r * d2;
        g3 += r * d3;
        g4 += r * d3 * u;
        g5 += r * d3 * u2;
        const w1 = w * d1;
        f11 += w1 * d1;
        f12 += w1 * d2;
        const w13 = w1 * d3;
        f13 += w13;
        f14 += w13 * u;
        f15 += w13 * u2;
        f22 += w * d2 * d2;
        const w23 = w * d2 * d3;
        f23 += w23;
        f24 += w23 * u;
        f25 += w23 * u2;
        const w33 = w * d3 * d3;
        f33 += w33;
        f34 += w33 * u;
        f35 += w33 * u2;
        f45 += w33 * u2 * u;
        f55 += w33 * u2 * u2;
      } else if (n > 0) bad = true;
    }
  }
  // d4 = d3·u and d5 = d3·u², so f44 = f35.
  const f = Float64Array.of(
    f00, 0, f02, f03, f04, f05,
    0, f11, f12, f13, f14, f15,
    f02, f12, f22, f23, f24, f25,
    f03, f13, f23, f33, f34, f35,
    f04, f14, f24, f34, f35, f45,
    f05, f15, f25, f35, f45, f55,
  );
  return { cost: bad ? Number.POSITIVE_INFINITY : 2 * c, g: Float64Array.of(g0, g1, g2, g3, g4, g5), f };
}

interface Minimum {
  p: Float64Array;
  cost: number;
  iterations: number;
  converged: boolean;
}

function clampParams(p: Float64Array): void {
  p[IA] = Math.max(MIN_AMPLITUDE, p[IA] as number);
  p[IB] = Math.max(MIN_AMPLITUDE, p[IB] as number);
  p[IV] = Math.min(1, Math.max(0, p[IV] as number));
}

/** Levenberg–Marquardt on C over the parameters in `free`, V kept in [0, 1] by an active set. */
function minimize(pr: Problem, start: Float64Array, free: number[]): Minimum {
  const p = start.slice();
  clampParams(p);
  let cur = evaluate(pr, p);
  let lambda = 1e-3;
  let converged = false;
  let iterations = 0;
  for (; iterations < MAX_ITERATIONS && !converged; iterations++) {
    // V pinned at a bound with the gradient pushing outward stays there for this step.
    const v = p[IV] as number;
    // Parameters with no information at this point (the phase terms when V = 0) sit out the step.
    const keep = free.filter((param) => {
      const ga = cur.g[param] as number;
      if (!((cur.f[param * NP + param] as number) > 0)) return false;
      return !(param === IV && ((v >= 1 && ga < 0) || (v <= 0 && ga > 0)));
    });
    const nk = keep.length;
    if (nk === 0) {
      converged = true;
      break;
    }
    const g = new Float64Array(nk);
    const f = new Float64Array(nk * nk);
    for (let i = 0; i < nk; i++) {
      const a = keep[i] as number;
      g[i] = -(cur.g[a] as number);
      for (let j = 0; j < nk; j++) f[i * nk + j] = cur.f[a * NP + (keep[j] as number)] as number;
    }
    let accepted = false;
    while (lambda < 1e12) {
      const m = f.slice();
      for (let i = 0; i < nk; i++) m[i * nk + i] = (m[i * nk + i] as number) * (1 + lambda);
      const step = solveSymmetric(m, g, nk);
      if (!step) {
        lambda *= 10;
        continue;
      }
      let predicted = 0;
      for (let i = 0; i < nk; i++) predicted += (step[i] as number) * (g[i] as number);
      const trial = p.slice();
      for (let i = 0; i < nk; i++) {
        const param = keep[i] as number;
        trial[param] = (trial[param] as number) + (step[i] as number);
      }
      clampParams(trial);
      const next = evaluate(pr, trial);
      if (next.cost <= cur.cost) {
        const decrease = cur.cost - next.cost;
        p.set(trial);
        cur = next;
        lambda = Math.max(lambda / 10, 1e-12);
        accepted = true;
        if (predicted < CONVERGED_DECREASE && decrease < 2 * CONVERGED_DECREASE) converged = true;
        break;
      }
      if (predicted < CONVERGED_DECREASE) {
        // No step the model predicts to help improves C: at the minimum to rounding.
        converged = true;
        break;
      }
      lambda *= 10;
    }
    if (!accepted && !converged) break;
  }
  return { p, cost: cur.cost, iterations, converged };
}

interface Deviance {
  value: number;
  /**
   * A correct model's mean deviance at the true counts, estimated from the fitted ones: the bins'
   * means at the fitted counts less what taking them there adds on average.
   */
  binMean: number;
  /** Sum of the bins' variances. */
  binVariance: number;
  /** ∂(Σ bins' means)/∂parameters, over all NP: how the expected deviance moves with the fit. */
  meanGradient: Float64Array;
}

/** vᵀ·M·w for an NP×NP row-major M. */
function bilinear(v: Float64Array, m: Float64Array, w: Float64Array): number {
  let s = 0;
  for (let a = 0; a < NP; a++) {
    const va = v[a] as number;
    if (va === 0) continue;
    for (let b = 0; b < NP; b++) s += va * (m[a * NP + b] as number) * (w[b] as number);
  }
  return s;
}

/**
 * The Baker–Cousins deviance and what a correct model's would average (poisson-deviance.ts).
 *
 * The bins' means are known at the fitted counts m(θ̂), not the true m(θ), and E(θ) = Σ E(m_i(θ))
 * taken at θ̂ is off on average by (second-order delta method, `cov` the fit's covariance)
 *   Σ E''(m)·∇mᵀ·Cov·∇m / 2  +  Σ E'(m)·(mean of m(θ̂) − m(θ)),
 * where m(θ̂) is off through the model's bend, tr(∇²m·Cov)/2, and through θ̂'s own bias, which for
 * Poisson counts is b = −Cov·Σ ∇m·tr(∇²m·Cov)/(2m) (Cox & Snell, J. R. Stat. Soc. B 30, 248
 * (1968), worked out for the Poisson likelihood). Left out, the first term left correct models'
 * deviance 3.6 above the estimate at half a count per bin (200 points, V = 0.9); the other two
 * nearly cancel there but not where V is near 1 and bins near the dark fringe hold almost nothing
 * (the estimate 1.6–2 too high at V = 0.98–1 without them). ∇²m leaves out the dead time's own
 * bend: its share is the counts lost to it, a few % where it matters at all, and at those counts
 * E' and E'' are nil.
 */
function deviance(pr: Problem, p: Float64Array, cov: Float64Array | null): Deviance {
  const A = p[IA] as number;
  const B = p[IB] as number;
  const V = p[IV] as number;
  const c = cov ?? new Float64Array(NP * NP);
  const cAA = c[IA * NP + IA] as number, cBB = c[IB * NP + IB] as number, cVV = c[IV * NP + IV] as number;
  const cAV = c[IA * NP + IV] as number, cBV = c[IB * NP + IV] as number;
  // Covariances with the phase θ = ψ + k·u + κ·u², whose gradient in (ψ, k, κ) is (1, u, u²).
  const row = (i: number): [number, number, number] => [c[i * NP + IPSI] as number, c[i * NP + IK] as number, c[i * NP + IKAPPA] as number];
  const [cAP, cAK, cAQ] = row(IA);
  const [cBP, cBK, cBQ] = row(IB);
  const [cVP, cVK, cVQ] = row(IV);
  const [cPP, cPK, cPQ] = row(IPSI);
  const [, cKK, cKQ] = row(IK);
  const cQQ = c[IKAPPA * NP + IKAPPA] as number;
  let value = 0;
  let binMean = 0;
  let binVariance = 0;
  let shift = 0;
  let gA = 0, gB = 0, gV = 0, gPsi = 0, gK = 0, gKap = 0;
  // Σ ∇m·tr(∇²m·Cov)/m, for θ̂'s bias.
  let hA = 0, hB = 0, hV = 0, hPsi = 0, hK = 0, hKap = 0;
  for (let i = 0; i < pr.len; i++) {
    const u = pr.u[i] as number;
    const u2 = u * u;
    const th = (p[IPSI] as number) + u * ((p[IK] as number) + (p[IKAPPA] as number) * u);
    const cs = Math.cos(th);
    const sn = Math.sin(th);
    const e = pr.e[i] as number;
    const ctA = cAP + u * cAK + u2 * cAQ;
    const ctB = cBP + u * cBK + u2 * cBQ;
    const ctV = cVP + u * cVK + u2 * cVQ;
    const tct = cPP + 2 * u * cPK + u2 * (2 * cPQ + cKK) + 2 * u2 * u * cKQ + u2 * u2 * cQQ;
    // The phase parameters share ∂/∂θ: summed over the point's two bins first.
    let gTh = 0;
    let hTh = 0;
    if (pr.useA) {
      // r = A(1 + V cos θ) + d_a, seen as m = e·f(r): ∇r = (rA, 0, rV, rTh·t), ∇m = e·f'·∇r.
      const r = A * (1 + V * cs) + pr.da;
      const [f, fp] = throughDeadTime(r, pr.dtA);
      const m = e * f;
      const moments = devianceTermMoments(m);
      value += binDeviance(pr.na[i] as number, m);
      binMean += moments.mean;
      binVariance += moments.variance;
      const rA = 1 + V * cs;
      const rV = A * cs;
      const rTh = -A * V * sn;
      const ef = e * fp;
      const w = moments.slope * ef;
      gA += w * rA;
      gV += w * rV;
      gTh += w * rTh;
      // ∇rᵀ·Cov·∇r, and tr(∇²r·Cov) from ∂²r/∂A∂V = cos θ, ∂A∂θ = −V sin θ, ∂V∂θ = −A sin θ, ∂θ² = −AV cos θ.
      const q = rA * rA * cAA + 2 * rA * rV * cAV + rV * rV * cVV + 2 * rTh * (rA * ctA + rV * ctV) + rTh * rTh * tct;
      const trR = 2 * cs * cAV - 2 * V * sn * ctA - 2 * A * sn * ctV - A * V * cs * tct;
      const trM = e * fp * trR;
      shift += 0.5 * (moments.curvature * ef * ef * q + moments.slope * trM);
      if (m > 0) {
        const z = (ef * trM) / m;
        hA += z * rA;
        hV += z * rV;
        hTh += z * rTh;
      }
    }
    if (pr.useB) {
      // r = B(1 − V cos θ) + d_b: the same with B for A and the cosine's sign turned.
      const r = B * (1 - V * cs) + pr.db;
      const [f, fp] = throughDeadTime(r, pr.dtB);
      const m = e * f;
      const moments = devianceTermMoments(m);
      value += binDeviance(pr.nb[i] as number, m);
      binMean += moments.mean;
      binVariance += moments.variance;
      const rB = 1 - V * cs;
      const rV = -B * cs;
      const rTh = B * V * sn;
      const ef = e * fp;
      const w = moments.slope * ef;
      gB += w * rB;
      gV += w * rV;
      gTh += w * rTh;
      const q = rB * rB * cBB + 2 * rB * rV * cBV + rV * rV * cVV + 2 * rTh * (rB * ctB + rV * ctV) + rTh * rTh * tct;
      const trR = -2 * cs * cBV + 2 * V * sn * ctB + 2 * B * sn * ctV + B * V * cs * tct;
      const trM = e * fp * trR;
      shift += 0.5 * (moments.curvature * ef * ef * q + moments.slope * trM);
      if (m > 0) {
        const z = (ef * trM) / m;
        hB += z * rB;
        hV += z * rV;
        hTh += z * rTh;
      }
    }
    gPsi += gTh;
    gK += gTh * u;
    gKap += gTh * u2;
    hPsi += hTh;
    hK += hTh * u;
    hKap += hTh * u2;
  }
  const meanGradient = Float64Array.of(gA, gB, gV, gPsi, gK, gKap);
  // Σ E'·∇mᵀ·b = −gᵀ·Cov·h/2.
  shift -= 0.5 * bilinear(meanGradient, c, Float64Array.of(hA, hB, hV, hPsi, hK, hKap));
  return { value, binMean: binMean - shift, binVariance, meanGradient };
}

/**
 * Cash C of flat outputs (V = 0): each output's ML level is its count per unit of exposure,
 * floored at its dark level.
 */
function flatCash(pr: Problem): number {
  let sa = 0;
  let sb = 0;
  let se = 0;
  for (let i = 0; i < pr.len; i++) {
    sa += pr.na[i] as number;
    sb += pr.nb[i] as number;
    se += pr.e[i] as number;
  }
  const ma = Math.max(sa / se, throughDeadTime(pr.da + MIN_AMPLITUDE, pr.dtA)[0]);
  const mb = Math.max(sb / se, throughDeadTime(pr.db + MIN_AMPLITUDE, pr.dtB)[0]);
  let c = 0;
  for (let i = 0; i < pr.len; i++) {
    const e = pr.e[i] as number;
    c += e * ma - (pr.na[i] as number) * Math.log(e * ma) + e * mb - (pr.nb[i] as number) * Math.log(e * mb);
  }
  return 2 * c;
}

/** Wrap an angle to (−π, π]. */
export function wrapPhase(a: number): number {
  const w = a - 2 * Math.PI * Math.floor((a + Math.PI) / (2 * Math.PI));
  return w === -Math.PI ? Math.PI : w;
}

// Start values: a periodogram of the normalized difference of the two outputs over the
// allowed frequency range, oversampled and refined by parabolic interpolation of the peak.
/** Zero-padding factor of the periodogram: grid points per Fourier resolution element. */
const OVERSAMPLE = 4;
/** Most fringes searched per pass without a hint: piezo sweeps span a few to tens of fringes. */
const MAX_CYCLES_DEFAULT = 128;
/** A second periodogram peak this strong relative to the first is also tried as a start. */
const SECOND_PEAK_RATIO = 0.5;

function starts(pr: Problem, fMin: number, fMax: number, A0: number, B0: number): Float64Array[] {
  const len = pr.len;
  const z = new Float64Array(len);
  let zMean = 0;
  for (let i = 0; i < len; i++) {
    const e = pr.e[i] as number;
    const v = (beforeDeadTime((pr.na[i] as number) / e, pr.dtA) - pr.da) / A0 - (beforeDeadTime((pr.nb[i] as number) / e, pr.dtB) - pr.db) / B0;
    z[i] = v;
    zMean += v;
  }
  zMean /= len;
  for (let i = 0; i < len; i++) z[i] = (z[i] as number) - zMean;
  // Grid z onto M uniform points across u ∈ [−1, 1] (at least 8 per cycle at fMax, so the
  // nearest-point gridding loses little), zero-pad OVERSAMPLE-fold and transform.
  let grid = 16;
  while (grid < Math.max(len, 16 * fMax)) grid <<= 1;
  const h = 2 / (grid - 1);
  const size = grid * OVERSAMPLE;
  const re = new Float64Array(size);
  const im = new Float64Array(size);
  for (let i = 0; i < len; i++) {
    const g = Math.round(((pr.u[i] as number) + 1) / h);
    re[g] = (re[g] as number) + (z[i] as number);
  }
  fft(re, im);
  const df = 1 / (size * h); // cycles per unit u per FFT bin
  const jMin = Math.max(1, Math.floor(fMin / df));
  const jMax = Math.min(size / 2 - 1, Math.ceil(fMax / df));
  const power = (j: number): number => (re[j] as number) ** 2 + (im[j] as number) ** 2;
  const peaks: number[] = [];
  for (let j = jMin; j <= jMax; j++) {
    const pj = power(j);
    if (pj >= power(j - 1) && pj > power(j + 1)) peaks.push(j);
  }
  if (peaks.length === 0) peaks.push(jMin);
  peaks.sort((a, b) => power(b) - power(a));
  const first = power(peaks[0] as number);
  const chosen = peaks.slice(0, 2).filter((j, i) => i === 0 || power(j) >= SECOND_PEAK_RATIO * first);
  return chosen.map((j) => {
    const a = power(j - 1);
    const b = power(j);
    const c = power(j + 1);
    const den = a - 2 * b + c;
    const f = (j + (den < 0 ? (0.5 * (a - c)) / den : 0)) * df;
    const k = 2 * Math.PI * f;
    // z ≈ 2V cos(ku + ψ), so Σ z e^(−iku) ≈ N·V·e^(iψ): phase and amplitude from the exact u.
    let sr = 0;
    let si = 0;
    for (let i = 0; i < len; i++) {
      const ku = k * (pr.u[i] as number);
      sr += (z[i] as number) * Math.cos(ku);
      si -= (z[i] as number) * Math.sin(ku);
    }
    const p = new Float64Array(NP);
    p[IA] = A0;
    p[IB] = B0;
    p[IV] = Math.min(0.95, Math.max(0.05, Math.hypot(sr, si) / len));
    p[IPSI] = Math.atan2(si, sr);
    p[IK] = k;
    p[IKAPPA] = 0;
    return p;
  });
}

interface Scaling {
  xc: number;
  s: number;
}

/** Reported parameters [A, B, V, P, φ, q] and their Jacobian with respect to [A, B, V, ψ, k, κ]. */
function physical(p: Float64Array, sc: Scaling): { values: Float64Array; jac: Float64Array } {
  const { xc, s } = sc;
  const psi = p[IPSI] as number;
  const k = p[IK] as number;
  const kap = p[IKAPPA] as number;
  const a = (k - (2 * kap * xc) / s) / s; // 2π/P
  const values = Float64Array.of(p[IA] as number, p[IB] as number, p[IV] as number, (2 * Math.PI) / a, psi - a * xc - (kap * xc * xc) / (s * s), kap / (a * s * s));
  const jac = new Float64Array(NP * NP);
  jac[0 * NP + IA] = 1;
  jac[1 * NP + IB] = 1;
  jac[2 * NP + IV] = 1;
  jac[3 * NP + IK] = (-2 * Math.PI) / (a * a * s);
  jac[3 * NP + IKAPPA] = (2 * Math.PI * 2 * xc) / (a * a * s * s);
  jac[4 * NP + IPSI] = 1;
  jac[4 * NP + IK] = -xc / s;
  jac[4 * NP + IKAPPA] = (xc * xc) / (s * s);
  jac[5 * NP + IK] = -kap / (a * a * s * s * s);
  jac[5 * NP + IKAPPA] = 1 / (a * s * s) + (2 * kap * xc) / (a * a * s * s * s * s);
  return { values, jac };
}

function covarianceOf(pr: Problem, p: Float64Array, free: number[]): Float64Array | null {
  const { f: all } = evaluate(pr, p);
  const nf = free.length;
  const f = new Float64Array(nf * nf);
  free.forEach((a, i) => free.forEach((b, j) => (f[i * nf + j] = all[a * NP + b] as number)));
  const inv = inverseSymmetric(f, nf);
  if (!inv) return null;
  const full = new Float64Array(NP * NP);
  free.forEach((a, i) => free.forEach((b, j) => (full[a * NP + b] = inv[i * free.length + j] as number)));
  return full;
}

/**
 * Root of ΔC(V) = `level` between V̂ (ΔC = 0) and `bound` by the Illinois variant of regula falsi:
 * 1 for a 68 % interval, k² when the errors are widened by the Birge factor k.
 */
function profileLimit(pr: Problem, best: Minimum, free: number[], bound: number, sigma: number, level: number): number {
  const vHat = best.p[IV] as number;
  const fixed = free.filter((i) => i !== IV);
  let warm = best.p;
  const excess = (v: number): number => {
    const start = warm.slice();
    start[IV] = v;
    const m = minimize(pr, start, fixed);
    warm = m.p;
    return m.cost - best.cost - level;
  };
  const fBound = excess(bound);
  if (!(fBound > 0)) return bound;
  // Bracket [V̂, bound]; try the Fisher estimate first to shrink it.
  let lo = vHat;
  let flo = -1;
  let hi = bound;
  let fhi = fBound;
  const guess = vHat + Math.sign(bound - vHat) * sigma;
  if ((guess - lo) * (hi - guess) > 0) {
    const fg = excess(guess);
    if (fg > 0) {
      hi = guess;
      fhi = fg;
    } else {
      lo = guess;
      flo = fg;
    }
  }
  let side = 0;
  for (let i = 0; i < 40; i++) {
    const v = (lo * fhi - hi * flo) / (fhi - flo);
    const fv = excess(v);
    if (Math.abs(fv) < 1e-3 || Math.abs(hi - lo) < 1e-7) return v;
    if (fv > 0) {
      hi = v;
      fhi = fv;
      if (side === 1) flo /= 2;
      side = 1;
    } else {
      lo = v;
      flo = fv;
      if (side === -1) fhi /= 2;
      side = -1;
    }
  }
  return (lo + hi) / 2;
}

interface SingleFit {
  min: Minimum;
  cov: Float64Array | null;
  free: number[];
}

function fitProblem(pr: Problem, candidates: Float64Array[], quadratic: boolean): SingleFit {
  const base = [IA, IB, IV, IPSI, IK];
  let best: Minimum | null = null;
  for (const c of candidates) {
    const m = minimize(pr, c, base);
    if (!best || m.cost < best.cost) best = m;
  }
  let min = best as Minimum;
  const free = quadratic ? [...base, IKAPPA] : base;
  if (quadratic) {
    const m = minimize(pr, min.p, free);
    min = { ...m, iterations: m.iterations + min.iterations };
  }
  return { min, cov: covarianceOf(pr, min.p, free), free };
}

/** V with its interval; `k` the fit's Birge factor, which widens the Fisher σ and the profile's ΔC alike. */
function visibilityEstimate(pr: Problem, fit: SingleFit, method: 'auto' | IntervalMethod, netCounts: number, k: number): VisibilityEstimate {
  const v = fit.min.p[IV] as number;
  const sigma = fit.cov ? k * Math.sqrt(Math.max(0, fit.cov[IV * NP + IV] as number)) : Number.NaN;
  const useProfile =
    method === 'profile' ||
    (method === 'auto' && (!(sigma > 0) || v + 3 * sigma > 1 || v - 3 * sigma < 0 || netCounts < LOW_COUNT_TOTAL));
  if (!useProfile) return { value: v, err: sigma, lower: Math.max(0, v - sigma), upper: Math.min(1, v + sigma), method: 'fisher' };
  const guess = sigma > 0 ? sigma : 0.01;
  const upper = v >= 1 ? 1 : profileLimit(pr, fit.min, fit.free, 1, guess, k * k);
  const lower = v <= 0 ? 0 : profileLimit(pr, fit.min, fit.free, 0, guess, k * k);
  return { value: v, err: (upper - lower) / 2, lower, upper, method: 'profile' };
}

/**
 * One output's own visibility, with θ(x) held at the joint fit's. With the phase fixed the model
 * m = A + W·(±cos θ) + d is linear in (A, W = A·V), so −ln L is convex there and plain Newton
 * steps (halved while any m would go non-positive) converge in a few passes without cos or sin.
 */
function outputVisibility(pr: Problem, joint: Float64Array, output: 'a' | 'b'): Measured {
  const len = pr.len;
  const counts = output === 'a' ? pr.na : pr.nb;
  const dark = output === 'a' ? pr.da : pr.db;
  const dt = output === 'a' ? pr.dtA : pr.dtB;
  const ex = pr.e;
  const sign = output === 'a' ? 1 : -1;
  const c = new Float64Array(len);
  for (let i = 0; i < len; i++) {
    const u = pr.u[i] as number;
    c[i] = sign * Math.cos((joint[IPSI] as number) + u * ((joint[IK] as number) + (joint[IKAPPA] as number) * u));
  }
  let A = joint[output === 'a' ? IA : IB] as number;
  let W = A * (joint[IV] as number);
  let fixedV: number | null = null; // set to 1 when the unconstrained optimum lies beyond V = 1
  for (let iter = 0; iter < 50; iter++) {
    let gA = 0;
    let gW = 0;
    let hAA = 0;
    let hAW = 0;
    let hWW = 0;
    for (let i = 0; i < len; i++) {
      const ci = c[i] as number;
      const n = counts[i] as number;
      const [f, fp] = throughDeadTime(A + (fixedV === null ? W : A * fixedV) * ci + dark, dt);
      const e = (ex[i] as number) * fp;
      const m = (ex[i] as number) * f;
      if (!(m > 0)) continue;
      const r = 1 - n / m;
      // Expected rather than observed curvature: the dead time makes the model nonlinear in (A, W).
      const h = dt ? 1 / m : n / (m * m);
      const dA = e * (fixedV === null ? 1 : 1 + fixedV * ci);
      const dW = e * ci;
      gA += r * dA;
      gW += r * dW;
      hAA += h * dA * dA;
      hAW += h * dA * dW;
      hWW += h * dW * dW;
    }
    let stepA: number;
    let stepW = 0;
    if (fixedV === null) {
      const det = hAA * hWW - hAW * hAW;
      if (!(det > 0)) break;
      stepA = (hWW * gA - hAW * gW) / det;
      stepW = (hAA * gW - hAW * gA) / det;
    } else {
      if (!(hAA > 0)) break;
      stepA = gA / hAA;
    }
    let t = 1;
    for (let k = 0; k < 30; k++) {
      const a = A - t * stepA;
      const w = W - t * stepW;
      let ok = a > 0;
      for (let i = 0; ok && i < len; i++) if (!(a + (fixedV === null ? w : a * fixedV) * (c[i] as number) + dark > 0) && (counts[i] as number) > 0) ok = false;
      if (ok) break;
      t /= 2;
    }
    A -= t * stepA;
    W -= t * stepW;
    if (fixedV === null && W > A) {
      fixedV = 1;
      continue;
    }
    if (Math.abs(t * stepA) < 1e-10 * A && Math.abs(t * stepW) < 1e-10 * (Math.abs(W) + A)) break;
  }
  // Fisher information in (A, W) at the optimum (V = 1 at the bound), then Var(V = W/A) by the delta method.
  const V = fixedV ?? Math.max(0, W / A);
  let fAA = 0;
  let fAW = 0;
  let fWW = 0;
  for (let i = 0; i < len; i++) {
    const ci = c[i] as number;
    const [f, fp] = throughDeadTime(A * (1 + V * ci) + dark, dt);
    const m = (ex[i] as number) * f;
    const e = (ex[i] as number) * fp;
    if (!(m > 0)) continue;
    fAA += (e * e) / m;
    fAW += (e * e * ci) / m;
    fWW += (e * e * ci * ci) / m;
  }
  const det = fAA * fWW - fAW * fAW;
  if (!(det > 0)) return { value: V, err: Number.NaN };
  // Cov(A, W) = F⁻¹; ∂V/∂A = −V/A, ∂V/∂W = 1/A.
  const varV = (fAA + 2 * V * fAW + V * V * fWW) / (det * A * A);
  return { value: V, err: Math.sqrt(Math.max(0, varV)) };
}

function measuredAt(values: Float64Array, cov: Float64Array, i: number): Measured {
  return { value: values[i] as number, err: Math.sqrt(Math.max(0, cov[i * NP + i] as number)) };
}

function scaleMeasured(m: Measured, k: number): Measured {
  return { value: m.value, err: m.err * k };
}

interface Goodness {
  /** Birge factor. */
  k: number;
  dev: number;
  dof: number;
  expected: number;
  pValue: number;
}

/**
 * A fit's goodness of fit and its Birge factor: √(deviance/expected) when its deviance is
 * improbable (p < ERROR_SCALE_P), else 1; each model (raw, net) has its own.
 *
 * The deviance is judged against a correct model's (`deviance`), less what fitting takes:
 * - each fitted parameter takes one χ²₁ off (mean 1, variance 2), since the log-likelihood stays
 *   close to quadratic in parameters that the whole pass's counts fix;
 * - the part of D's spread that moves the fit moves the expected deviance with it, and is no
 *   spread about it. At a fraction of a count per bin d follows the count almost linearly
 *   (d(1, 0.1) = 2.8 against d(0, 0.1) = 0.2), so most of D's variance is the pass's total, which
 *   the amplitudes absorb: with 0.1 counts in each of 200 bins of a flat pass, the deviance's
 *   variance about its expected value was 7 against ΣV = 172 (Monte Carlo). That part is the
 *   delta-method variance gᵀ·Cov·g of the expected deviance, g its gradient in the parameters
 *   (g is also Cov(D, score), since ∂E/∂μ = Cov(d, n)/μ).
 * A V pinned at its bound does not move with the counts: the covariance is then the other
 * parameters' (with V's in it the expected deviance of V = 1 fits came out 3 too high).
 * At high counts every bin's d has mean 1 and variance 2 and g vanishes, so p is χ²(dof)'s.
 */
function goodnessOfFit(pr: Problem, fit: SingleFit): Goodness {
  const v = fit.min.p[IV] as number;
  const cov = v >= 1 || v <= 0 ? covarianceOf(pr, fit.min.p, fit.free.filter((i) => i !== IV)) : fit.cov;
  const { value: dev, binMean, binVariance, meanGradient: g } = deviance(pr, fit.min.p, cov);
  const nFree = fit.free.length;
  const dof = 2 * pr.len - nFree;
  const expected = binMean - nFree;
  const pValue = devianceSf(dev, expected, binVariance - 2 * nFree - (cov ? bilinear(g, cov, g) : 0));
  return { k: pValue < ERROR_SCALE_P && dev > expected ? Math.sqrt(dev / expected) : 1, dev, dof, expected, pValue };
}

/** Fit one monotonic pass. Counts must be non-negative; x need not be uniformly spaced. */
export function fitFringes(data: FringeData, options: FringeFitOptions = {}): FringeFitResult {
  const len = data.x.length;
  if (data.countsA.length !== len || data.countsB.length !== len) return { ok: false, reason: 'x, countsA and countsB differ in length' };
  const quadratic = options.quadratic ?? false;
  const nParams = quadratic ? 6 : 5;
  if (len < nParams + 2) return { ok: false, reason: `${len} bins are too few for a ${nParams}-parameter fit` };
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  let sumA = 0;
  let sumB = 0;
  if (data.exposure && data.exposure.length !== len) return { ok: false, reason: 'exposure and x differ in length' };
  const u = new Float64Array(len);
  const na = new Float64Array(len);
  const nb = new Float64Array(len);
  const e = new Float64Array(len);
  let sumE = 0;
  for (let i = 0; i < len; i++) {
    const x = data.x[i] as number;
    const a = data.countsA[i] as number;
    const b = data.countsB[i] as number;
    const ei = data.exposure ? (data.exposure[i] as number) : 1;
    if (!Number.isFinite(x) || !(a >= 0) || !(b >= 0)) return { ok: false, reason: `bin ${i} has a non-finite position or negative counts` };
    if (!(ei > 0 && Number.isFinite(ei))) return { ok: false, reason: `point ${i} has no positive exposure` };
    e[i] = ei;
    sumE += ei;
    lo = Math.min(lo, x);
    hi = Math.max(hi, x);
    na[i] = a;
    nb[i] = b;
    sumA += a;
    sumB += b;
  }
  if (!(hi > lo)) return { ok: false, reason: 'the scan coordinate does not move' };
  const sc: Scaling = { xc: (lo + hi) / 2, s: (hi - lo) / 2 };
  for (let i = 0; i < len; i++) u[i] = ((data.x[i] as number) - sc.xc) / sc.s;
  const calibrated = options.darkA !== undefined || options.darkB !== undefined;
  const da = options.darkA ?? 0;
  const db = options.darkB ?? 0;
  if (!(da >= 0 && db >= 0)) return { ok: false, reason: 'dark counts per bin must be non-negative' };
  const dtA = options.deadTimeA ?? null;
  const dtB = options.deadTimeB ?? null;
  for (const t of [dtA, dtB]) if (t && !(t.tauOver >= 0 && Number.isFinite(t.tauOver))) return { ok: false, reason: 'dead time per point must be non-negative' };
  // An output whose mean sits at or below its calibrated dark level (as its detector records it)
  // has no fringe to fit: its amplitude would collapse onto MIN_AMPLITUDE and leave V and the
  // period unconstrained.
  for (const [name, dark, sum, dt] of [['a', options.darkA, sumA, dtA], ['b', options.darkB, sumB, dtB]] as const) {
    const seen = dark === undefined ? undefined : throughDeadTime(dark, dt)[0];
    if (seen !== undefined && sum / sumE <= seen) {
      return { ok: false, reason: `no net signal above the dark level: output ${name} averages ${(sum / sumE).toPrecision(3)} counts per bin against ${seen.toPrecision(3)} of calibrated dark` };
    }
  }
  const A0 = Math.max(beforeDeadTime(sumA / sumE, dtA) - da, 1e-3);
  const B0 = Math.max(beforeDeadTime(sumB / sumE, dtB) - db, 1e-3);
  if (sumA + sumB === 0) return { ok: false, reason: 'no counts in this pass' };

  // Frequencies in cycles per unit of u (the pass spans 2 units).
  const range = hi - lo;
  const minPeriod = options.periodHint ? options.periodHint / 1.5 : Math.max((4 * range) / len, range / MAX_CYCLES_DEFAULT);
  const maxPeriod = options.periodHint ? options.periodHint * 1.5 : 2 * range;
  const fMin = sc.s / maxPeriod;
  const fMax = sc.s / minPeriod;

  const raw: Problem = { u, na, nb, e, dtA, dtB, len, da: 0, db: 0, useA: true, useB: true };
  const net: Problem = { ...raw, da, db };
  const shownProblem = calibrated ? net : raw;
  const fit = fitProblem(shownProblem, starts(shownProblem, fMin, fMax, A0, B0), quadratic);
  const warnings: string[] = [];
  if (!fit.min.converged) warnings.push(FIT_WARNING.notConverged);
  if (!fit.cov) return { ok: false, reason: 'the Fisher information is singular: the data do not constrain the fringe' };

  // The raw fit starts from the net one: the same fringe with the dark counts folded into A and B.
  let rawFit = fit;
  if (calibrated) {
    const s = fit.min.p.slice();
    s[IA] = (s[IA] as number) + da;
    s[IB] = (s[IB] as number) + db;
    s[IV] = ((s[IV] as number) * ((fit.min.p[IA] as number) + (fit.min.p[IB] as number))) / ((s[IA] as number) + (s[IB] as number));
    rawFit = fitProblem(raw, [s], quadratic);
  }
  const netTotal = sumA + sumB - sumE * (da + db);
  const method = options.interval ?? 'auto';
  const { k, dev, dof, expected, pValue } = goodnessOfFit(shownProblem, fit);
  const kRaw = calibrated ? goodnessOfFit(raw, rawFit).k : k;
  const visibility = visibilityEstimate(raw, rawFit, method, sumA + sumB, kRaw);
  const visibilityNet = calibrated ? visibilityEstimate(net, fit, method, netTotal, k) : null;
  if ((calibrated ? (visibilityNet as VisibilityEstimate) : visibility).value >= 1) warnings.push(FIT_WARNING.atBound);

  const { values, jac } = physical(fit.min.p, sc);
  const cov = new Float64Array(NP * NP);
  const full = fit.cov;
  for (let i = 0; i < NP; i++) {
    for (let j = 0; j < NP; j++) {
      let s = 0;
      for (let a = 0; a < NP; a++) {
        const ja = jac[i * NP + a] as number;
        if (ja === 0) continue;
        for (let b = 0; b < NP; b++) s += ja * (full[a * NP + b] as number) * (jac[j * NP + b] as number);
      }
      cov[i * NP + j] = s;
    }
  }
  const names = quadratic ? PARAM_NAMES : PARAM_NAMES.slice(0, 5);
  const matrix = names.map((_, i) => names.map((__, j) => k * k * (cov[i * NP + j] as number)));
  const fringeDeltaCash = flatCash(shownProblem) - fit.min.cost;
  // Periods searched: the pass spans 2 units of u, so 2·(fMax − fMin) cycles' worth of frequencies.
  const fringeThreshold = fringeDetectionThreshold(2 * (fMax - fMin), quadratic);
  // Counts that scatter beyond Poisson (k > 1) inflate the ΔC of noise by k² as well: judged on
  // the same scale as the widened errors, a flat pass on a noisy bench is not called a fringe.
  if (fringeDeltaCash / (k * k) < fringeThreshold) warnings.push(FIT_WARNING.noFringe);
  const at = (i: number) => scaleMeasured(measuredAt(values, cov, i), k);
  const phase = at(4);
  const output = (pr: Problem, p: Float64Array, o: 'a' | 'b', factor: number) => scaleMeasured(outputVisibility(pr, p, o), factor);
  return {
    ok: true,
    visibility,
    visibilityNet,
    shown: calibrated ? 'net' : 'raw',
    period: at(3),
    phase: { value: wrapPhase(phase.value), err: phase.err },
    phaseAtCenter: { value: wrapPhase(fit.min.p[IPSI] as number), err: k * Math.sqrt(Math.max(0, full[IPSI * NP + IPSI] as number)) },
    center: sc.xc,
    quadratic: quadratic ? at(5) : null,
    amplitudeA: at(0),
    amplitudeB: at(1),
    outputs: {
      a: { raw: output(raw, rawFit.min.p, 'a', kRaw), net: calibrated ? output(net, fit.min.p, 'a', k) : null },
      b: { raw: output(raw, rawFit.min.p, 'b', kRaw), net: calibrated ? output(net, fit.min.p, 'b', k) : null },
    },
    counts: { a: sumA, b: sumB, bins: len },
    darkPerBin: calibrated ? { a: da, b: db } : null,
    deadTime: { a: dtA, b: dtB },
    quality: { cash: fit.min.cost, deviance: dev, dof, expectedDeviance: expected, pValue, iterations: fit.min.iterations, converged: fit.min.converged, fringeDeltaCash, fringeThreshold, errorScale: k },
    covariance: { names, matrix },
    warnings,
  };
}
