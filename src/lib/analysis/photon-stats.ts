// Photon statistics of a channel: Mandel Q, g2(0) from coincidence counts, and the heralded
// anticorrelation parameter α.
import type { Measured } from './measured.ts';
import { garwoodInterval, type PoissonInterval } from './poisson-intervals.ts';

export interface MandelQ {
  /** Q = s_Δ²/n̄ − 1, s_Δ² = Σ(n_{i+1} − n_i)²/(2(N − 1)): the variance of the counts from bin to bin. */
  q: Measured;
  mean: number;
  variance: number;
  bins: number;
}

/**
 * Mandel's Q over the counts per bin of one channel (Mandel, Opt. Lett. 4, 205 (1979)): 0 for
 * Poisson light, −η for single photons detected with efficiency η. The variance is the two-sample
 * (Allan) variance of adjacent bins, half the mean squared difference (Allan, Proc. IEEE 54, 221
 * (1966); for independent bins it equals the ordinary variance): a fringe drifting over the window
 * changes the rate, and the ordinary sample variance read that as bunching (Q ≈ 1 on a laser
 * bench whose phase wandered by a tenth of a fringe in 10 s), while a slow change barely moves
 * one bin's count from the next. What it gives up: fluctuations slower than a bin are not
 * measured, which is what the figure shows anyway (photon statistics within a bin).
 * Standard error by the delta method: the squared differences' variance with their lag-1
 * covariance (adjacent differences share a bin), the mean's variance, and their covariance
 * through the third central moment, estimated from second differences so that drift leaves it
 * alone (E[(n_i − (n_{i−1} + n_{i+1})/2)³] = ¾μ₃ for independent bins). About √(3/bins) for
 * Poisson counts; checked by Monte Carlo in the tests.
 */
export function mandelQ(counts: ArrayLike<number>, gapsBefore: readonly number[] = []): MandelQ {
  const n = counts.length;
  if (n < 4) throw new RangeError('Mandel Q needs at least 4 bins');
  let mean = 0;
  for (let i = 0; i < n; i++) mean += counts[i] as number;
  mean /= n;
  if (!(mean > 0)) throw new RangeError('Mandel Q is undefined without counts');
  // Bins i and i + 1 are neighbours in time unless a gap falls between them (`gapsBefore` holds the
  // index of each bin that follows one): those pairs are no difference over one bin.
  const follows = new Uint8Array(n).fill(1);
  for (const g of gapsBefore) if (g > 0 && g < n) follows[g] = 0;
  let pairs = 0;
  let variance = 0;
  for (let i = 0; i + 1 < n; i++) {
    if (!follows[i + 1]) continue;
    const d = (counts[i + 1] as number) - (counts[i] as number);
    variance += (d * d) / 2;
    pairs++;
  }
  if (pairs < 3) throw new RangeError('Mandel Q needs at least 3 pairs of adjacent bins');
  variance /= pairs;
  // Autocovariances of y_i = (n_{i+1} − n_i)²/2 at lags 0 and 1 (further lags share no bin).
  let g0 = 0;
  let g1 = 0;
  for (let i = 0; i + 1 < n; i++) {
    if (!follows[i + 1]) continue;
    const d = (counts[i + 1] as number) - (counts[i] as number);
    const y = (d * d) / 2 - variance;
    g0 += y * y;
    if (i > 0 && follows[i]) {
      const e = (counts[i] as number) - (counts[i - 1] as number);
      g1 += y * ((e * e) / 2 - variance);
    }
  }
  g0 /= pairs;
  g1 /= pairs;
  let third = 0;
  let triplets = 0;
  for (let i = 1; i + 1 < n; i++) {
    if (!follows[i] || !follows[i + 1]) continue;
    const e = (counts[i] as number) - ((counts[i - 1] as number) + (counts[i + 1] as number)) / 2;
    third += e * e * e;
    triplets++;
  }
  const mu3 = triplets > 0 ? (4 / 3) * (third / triplets) : 0;
  const varS = Math.max(0, g0 + 2 * g1) / pairs;
  const varMean = variance / n;
  const covSMean = mu3 / n;
  // Q + 1 = s²/n̄.
  const ratio = variance / mean;
  const varQ = (varS - 2 * ratio * covSMean + ratio * ratio * varMean) / (mean * mean);
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
