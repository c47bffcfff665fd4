// Photon statistics of a channel: Mandel Q, g2(0) from coincidence counts, and the heralded
// anticorrelation parameter α.
import type { Measured } from './measured.ts';
import { garwoodInterval, type PoissonInterval } from './poisson-intervals.ts';

export interface MandelQ {
  /** Q = (s² − n̄)/n̄ with s² the unbiased (n − 1) sample variance of the counts per bin. */
  q: Measured;
  mean: number;
  variance: number;
  bins: number;
}

/**
 * Mandel's Q over the counts per bin of one channel (Mandel, Opt. Lett. 4, 205 (1979)): 0 for
 * Poisson light, −η for single photons detected with efficiency η. Standard error by the delta
 * method from the sample's own second to fourth central moments (about √(2/bins) for Poisson).
 */
export function mandelQ(counts: ArrayLike<number>): MandelQ {
  const n = counts.length;
  if (n < 4) throw new RangeError('Mandel Q needs at least 4 bins');
  let mean = 0;
  for (let i = 0; i < n; i++) mean += counts[i] as number;
  mean /= n;
  if (!(mean > 0)) throw new RangeError('Mandel Q is undefined without counts');
  let m2 = 0;
  let m3 = 0;
  let m4 = 0;
  for (let i = 0; i < n; i++) {
    const d = (counts[i] as number) - mean;
    const d2 = d * d;
    m2 += d2;
    m3 += d2 * d;
    m4 += d2 * d2;
  }
  const variance = m2 / (n - 1);
  m2 /= n;
  m3 /= n;
  m4 /= n;
  // Var(s²) ≈ (μ₄ − μ₂²)/n, Var(n̄) = μ₂/n, Cov(n̄, s²) ≈ μ₃/n; Q + 1 = s²/n̄.
  const ratio = variance / mean;
  const varQ = ((m4 - m2 * m2) / n - (2 * ratio * m3) / n + (ratio * ratio * m2) / n) / (mean * mean);
  return { q: { value: ratio - 1, err: Math.sqrt(Math.max(0, varQ)) }, mean, variance, bins: n };
}

/**
 * Mandel Q that Poisson (laser) light shows through a detector losing the fraction `loss` = m·τ of
 * its counts to non-paralyzable dead time: the counts' variance is about m·T·(1 − mτ)² (Müller,
 * Nucl. Instrum. Methods 112, 47 (1973); from memory, checked by an event-level simulation in the
 * test), so Q ≈ (1 − mτ)² − 1 ≈ −2mτ. A measured Q is sub-Poissonian only below this. To first
 * order in the loss the paralyzable model gives the same.
 */
export function poissonQThroughDeadTime(loss: number): number {
  if (!(loss >= 0 && loss < 1)) throw new RangeError('dead-time loss must be in [0, 1)');
  return (1 - loss) ** 2 - 1;
}

export interface CoincidenceInput {
  /**
   * Singles of the two detectors, bin by bin over the same acquisition (one bin holding the totals
   * is the textbook form, right only while both rates stay constant).
   */
  counts1: ArrayLike<number>;
  counts2: ArrayLike<number>;
  /** Bin width Δt, s. */
  binS: number;
  /** Coincidences within the window over all the bins. */
  coincidences: number;
  /**
   * Full coincidence window τ_c, s: a pair counts when |t₁ − t₂| ≤ τ_c/2. With each channel's
   * resolving time τ this is τ_c = 2τ, so the accidental rate R₁R₂τ_c is the 2τR₁R₂ of the texts.
   */
  windowS: number;
}

export interface G2Result {
  /** g2(0) = N_c/N_acc: 1 coherent, 2 thermal, 0 single photon. */
  g2: Measured;
  /** Garwood 1σ interval on g2(0) from the coincidence count alone (the dominant error). */
  interval: { lower: number; upper: number };
  /** Expected accidental coincidences N_acc = Σᵢ n₁ᵢn₂ᵢτ_c/Δt. */
  accidentals: number;
  /** Coincidences above accidentals, N_c − N_acc: the correlated pairs. */
  excess: Measured;
}

/**
 * Σᵢ aᵢbᵢ/cᵢ over bins with cᵢ > 0, and its variance with every count an independent Poisson
 * variable (which overstates it a little where the counts are correlated: conservative).
 */
function binProductSum(a: ArrayLike<number>, b: ArrayLike<number>, c: (i: number) => number): { sum: number; variance: number } {
  if (a.length !== b.length) throw new RangeError('singles series of unequal length');
  let sum = 0;
  let variance = 0;
  for (let i = 0; i < a.length; i++) {
    const ci = c(i);
    if (!(ci > 0)) continue;
    const ai = a[i] as number;
    const bi = b[i] as number;
    sum += (ai * bi) / ci;
    variance += (bi * bi * ai + ai * ai * bi) / (ci * ci);
  }
  return { sum, variance };
}

/**
 * g2(0) of a two-detector (Hanbury Brown–Twiss) measurement from singles and coincidences. The
 * accidentals R₁R₂τ_c are what uncorrelated light gives at each moment, so they are summed bin by
 * bin: with the window totals instead, two outputs of an interferometer that move in antiphase
 * through a fringe read ⟨R₁R₂⟩/(⟨R₁⟩⟨R₂⟩) = 1 − V²/2 for laser light, as if antibunched.
 */
export function g2FromCoincidences(input: CoincidenceInput): G2Result | null {
  const { counts1, counts2, binS, coincidences, windowS } = input;
  if (!(binS > 0 && windowS > 0)) throw new RangeError('bin width and window must be positive');
  const products = binProductSum(counts1, counts2, () => binS / windowS);
  const accidentals = products.sum;
  // Singles that never share a bin give no accidentals to compare with: no g2(0) from these data.
  if (!(accidentals > 0)) return null;
  const g2 = coincidences / accidentals;
  const relVarAcc = products.variance / (accidentals * accidentals);
  const err = Math.sqrt(coincidences / (accidentals * accidentals) + g2 * g2 * relVarAcc);
  const ci: PoissonInterval = garwoodInterval(Math.round(coincidences));
  return {
    g2: { value: g2, err },
    interval: { lower: ci.lower / accidentals, upper: ci.upper / accidentals },
    accidentals,
    excess: { value: coincidences - accidentals, err: Math.sqrt(coincidences + products.variance) },
  };
}

export interface HeraldedInput {
  /** Herald (gate) detections N_G,ᵢ, bin by bin (one bin holding the totals is the textbook form). */
  gates: ArrayLike<number>;
  /** Gate–transmitted and gate–reflected twofold coincidences N_GT,ᵢ and N_GR,ᵢ in the same bins. */
  gateTransmitted: ArrayLike<number>;
  gateReflected: ArrayLike<number>;
  /** Threefold coincidences N_GTR over all the bins. */
  triples: number;
}

/**
 * Heralded anticorrelation parameter α = N_GTR·N_G/(N_GT·N_GR) (Grangier, Roger & Aspect,
 * Europhys. Lett. 1, 173 (1986); Thorn et al., Am. J. Phys. 72, 1210 (2004)): 1 for classical
 * coherent light, 0 for an ideal single photon. The triples expected without anticorrelation,
 * N_GT·N_GR/N_G, are summed bin by bin, for the reason given at g2FromCoincidences. Error from
 * the Poisson variances of the counts treated as independent, which slightly overstates it
 * (N_GTR ⊂ N_GT): conservative.
 */
export function heraldedAlpha(input: HeraldedInput): { alpha: Measured; triplesInterval: { lower: number; upper: number } } | null {
  const { gates, gateTransmitted, gateReflected, triples } = input;
  if (gates.length !== gateTransmitted.length) throw new RangeError('gate series of unequal length');
  const expected = binProductSum(gateTransmitted, gateReflected, (i) => gates[i] as number);
  // The gates' own Poisson variance: ∂(tr/g)/∂g = −tr/g².
  let gateVariance = 0;
  for (let i = 0; i < gates.length; i++) {
    const g = gates[i] as number;
    if (g > 0) gateVariance += ((gateTransmitted[i] as number) * (gateReflected[i] as number)) ** 2 / g ** 3;
  }
  // No bin with a gate and both twofolds: no expected triples, no α from these data.
  if (!(expected.sum > 0)) return null;
  const scale = 1 / expected.sum;
  const alpha = triples * scale;
  const relVar = (expected.variance + gateVariance) * scale * scale;
  const err = Math.sqrt(triples * scale * scale + alpha * alpha * relVar);
  const ci = garwoodInterval(Math.round(triples));
  return { alpha: { value: alpha, err }, triplesInterval: { lower: ci.lower * scale, upper: ci.upper * scale } };
}
