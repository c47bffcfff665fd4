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
  // Bins i and i + 1 are neighbours in time unless a gap falls between them (`gapsBefore` holds the
  // index of each bin that follows one): those pairs are no difference over one bin.
  const gaps = new Set(gapsBefore);
  const sums = new MandelQSums();
  for (let i = 0; i < counts.length; i++) sums.add(counts[i] as number, i > 0 && !gaps.has(i));
  return sums.result();
}

/**
 * mandelQ's sums, taken bin by bin, so a run's millions of bins need not be held at once (the run
 * report reads them batch by batch). `add` each bin in time order, saying whether it follows the
 * previous one as its neighbour in time (no gap, and for a run the drive at the same position).
 * The centred moments are expanded into plain sums (Σ(u − s)² = Σu² − 2sΣu + k·s²), which
 * loses nothing here: the terms are of one size and their spread is of the order of their mean.
 */
export class MandelQSums {
  private bins = 0;
  private total = 0;
  private pairs = 0;
  private sumU = 0;
  private sumU2 = 0;
  /** Adjacent pairs of differences (they share a bin): their count, Σ u·u′ and Σ(u + u′). */
  private lagPairs = 0;
  private sumUU = 0;
  private sumULag = 0;
  private third = 0;
  private triplets = 0;
  /** The last two bins, whether the last followed its predecessor, and its difference's u. */
  private last = 0;
  private beforeLast = 0;
  private lastFollows = false;
  private lastU = 0;

  /** One bin's count; `follows`: it is the previous bin's neighbour in time. */
  add(count: number, follows: boolean): void {
    const pair = follows && this.bins > 0;
    if (pair) {
      const d = count - this.last;
      const u = (d * d) / 2;
      this.pairs++;
      this.sumU += u;
      this.sumU2 += u * u;
      if (this.lastFollows) {
        this.lagPairs++;
        this.sumUU += u * this.lastU;
        this.sumULag += u + this.lastU;
        const e = this.last - (this.beforeLast + count) / 2;
        this.third += e * e * e;
        this.triplets++;
      }
      this.lastU = u;
    }
    this.lastFollows = pair;
    this.beforeLast = this.last;
    this.last = count;
    this.bins++;
    this.total += count;
  }

  /** Q of the bins added so far (mandelQ's estimate and error); throws where mandelQ would. */
  result(): MandelQ {
    const n = this.bins;
    if (n < 4) throw new RangeError('Mandel Q needs at least 4 bins');
    const mean = this.total / n;
    if (!(mean > 0)) throw new RangeError('Mandel Q is undefined without counts');
    const pairs = this.pairs;
    if (pairs < 3) throw new RangeError('Mandel Q needs at least 3 pairs of adjacent bins');
    const variance = this.sumU / pairs;
    // Autocovariances of y_i = (n_{i+1} − n_i)²/2 at lags 0 and 1 (further lags share no bin).
    const g0 = (this.sumU2 - 2 * variance * this.sumU + pairs * variance * variance) / pairs;
    const g1 = (this.sumUU - variance * this.sumULag + this.lagPairs * variance * variance) / pairs;
    const mu3 = this.triplets > 0 ? (4 / 3) * (this.third / this.triplets) : 0;
    const varS = Math.max(0, g0 + 2 * g1) / pairs;
    const varMean = variance / n;
    const covSMean = mu3 / n;
    // Q + 1 = s²/n̄.
    const ratio = variance / mean;
    const varQ = (varS - 2 * ratio * covSMean + ratio * ratio * varMean) / (mean * mean);
    return { q: { value: ratio - 1, err: Math.sqrt(Math.max(0, varQ)) }, mean, variance, bins: n };
  }

  /** Pairs of neighbouring bins so far: at least 3 give a Q. */
  get pairCount(): number {
    return this.pairs;
  }

  /** Mean count per bin so far (0 before any): a Q needs it above 0. */
  get mean(): number {
    return this.bins > 0 ? this.total / this.bins : 0;
  }
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
 * Σᵢ aᵢbᵢ/cᵢ over bins with cᵢ > 0, taken bin by bin (a run's bins batch by batch), with its
 * variance with every count an independent Poisson variable (which overstates it a little where the
 * counts are correlated: conservative), and Σ(aᵢbᵢ)²/cᵢ³, the variance the cᵢ add where they are
 * counts too (∂(ab/c)/∂c = −ab/c²).
 */
export class BinProductSum {
  sum = 0;
  variance = 0;
  divisorVariance = 0;

  add(a: number, b: number, c: number): void {
    if (!(c > 0)) return;
    this.sum += (a * b) / c;
    this.variance += (b * b * a + a * a * b) / (c * c);
    this.divisorVariance += (a * b) ** 2 / (c * c * c);
  }
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
  if (counts1.length !== counts2.length) throw new RangeError('singles series of unequal length');
  const accidentals = new BinProductSum();
  for (let i = 0; i < counts1.length; i++) accidentals.add(counts1[i] as number, counts2[i] as number, binS / windowS);
  return g2FromSums(accidentals, coincidences);
}

/** g2FromCoincidences from the accidentals summed bin by bin (each bin's n₁n₂ over Δt/τ_c). */
export function g2FromSums(products: BinProductSum, coincidences: number): G2Result | null {
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
export function heraldedAlpha(input: HeraldedInput): HeraldedAlpha | null {
  const { gates, gateTransmitted, gateReflected, triples } = input;
  if (gates.length !== gateTransmitted.length || gates.length !== gateReflected.length) throw new RangeError('gate series of unequal length');
  const expected = new BinProductSum();
  for (let i = 0; i < gates.length; i++) expected.add(gateTransmitted[i] as number, gateReflected[i] as number, gates[i] as number);
  return alphaFromSums(expected, triples);
}

export interface HeraldedAlpha {
  alpha: Measured;
  /** Garwood 1σ interval on α from the triples alone. */
  triplesInterval: { lower: number; upper: number };
  /** Triples expected without anticorrelation, Σᵢ N_GT,ᵢN_GR,ᵢ/N_G,ᵢ. */
  expected: number;
}

/** heraldedAlpha from the expected triples summed bin by bin (each bin's N_GT·N_GR over N_G). */
export function alphaFromSums(expected: BinProductSum, triples: number): HeraldedAlpha | null {
  // No bin with a gate and both twofolds: no expected triples, no α from these data.
  if (!(expected.sum > 0)) return null;
  const scale = 1 / expected.sum;
  const alpha = triples * scale;
  // The gates' own Poisson variance adds to the twofolds'.
  const relVar = (expected.variance + expected.divisorVariance) * scale * scale;
  const err = Math.sqrt(triples * scale * scale + alpha * alpha * relVar);
  const ci = garwoodInterval(Math.round(triples));
  return { alpha: { value: alpha, err }, triplesInterval: { lower: ci.lower * scale, upper: ci.upper * scale }, expected: expected.sum };
}
