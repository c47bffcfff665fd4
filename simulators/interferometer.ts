// A two-output (Mach–Zehnder) interferometer with a piezo-scanned mirror, fed by an attenuated
// laser or a heralded single-photon source, counted by single-photon detectors on both outputs.
// Pure and deterministic from a seed: no timers, no I/O. The gateway calls `next(nBins, dtMs)` per
// batch and `command(…)` when a sweep/hold/stop arrives; simulated time advances only with `next`.
import type { CommandBody } from '../src/lib/contract/wire.ts';
import type { CommandResult, DriveStatus } from './drive.ts';
import type { DetectorModel } from './detector.ts';
import type { PiezoModel, ScanRange } from './piezo.ts';
import type { Rng } from './random.ts';
import { ScanDrive } from './drive.ts';
import { clicks, liveFraction } from './detector.ts';
import { Piezo } from './piezo.ts';
import { gaussian, mulberry32, poisson } from './random.ts';

export type { CommandResult, DriveStatus } from './drive.ts';
export type { DetectorModel } from './detector.ts';
export type { PiezoModel, ScanRange } from './piezo.ts';

export interface OpticsModel {
  /** Vacuum wavelength, nm. */
  wavelengthNm: number;
  /**
   * Optical path change per unit of piezo displacement (a setting of the bench's geometry):
   * 2 for a retro-reflecting mirror in one arm (one fringe per λ/2), 2·cos θ for a fold mirror at
   * incidence θ, ≈1.15 for a fibre stretcher (n_eff ≈ 1.47 less the strain-optic correction).
   */
  pathFactor: number;
  /** Fringe visibility from the mode overlap of the two arms, 0–1. */
  visibility: number;
  /** Phase difference with the piezo at `min` and no drift yet, rad. */
  phaseOffsetRad: number;
  /** Slow linear thermal drift of the phase, rad/s. */
  driftRadPerS: number;
  /** Random-walk part of the drift: phase variance grows by this much per second, rad²/s. */
  driftDiffusionRad2PerS: number;
}

export type SourceModel =
  | {
      kind: 'coherent';
      /** Attenuated laser: photons per second entering the interferometer (Poisson). */
      photonRate: number;
    }
  | {
      kind: 'heralded';
      /** Photon pairs per second generated into the collected modes (Poisson). */
      pairRate: number;
      /**
       * Heralded g2(0) from multi-pair emission, the value N_GTR·N_G/(N_GT·N_GR) would give
       * without accidentals (Grangier, Roger, Aspect 1986); SPDC at ~10⁶ pairs/s gives 10⁻³–10⁻².
       */
      g2: number;
      /** The herald (idler) arm's detector, efficiency including its fibre coupling. */
      herald: DetectorModel;
    };

export interface SimulatorModel {
  /**
   * Channel keys (contract `[a-z0-9_]{1,16}`): the two outputs, and the herald for a heralded
   * source. With a heralded source, `a` and `b` count clicks in coincidence with a herald and
   * `cc` the triple coincidences herald ∧ a ∧ b (the heralded anticorrelation experiment);
   * with a laser they are the outputs' singles and `cc` their twofold coincidences.
   */
  channels: { a: string; b: string; herald?: string };
  optics: OpticsModel;
  piezo: PiezoModel;
  scan: ScanRange;
  source: SourceModel;
  detectors: { a: DetectorModel; b: DetectorModel };
  /** Full coincidence window Δt, ns; accidentals R₁·R₂·Δt. 0 leaves `cc` out of the batches. */
  coincidenceWindowNs: number;
}

/** The wire-shaped part of a count batch; the gateway adds v, boot, seq, t0 and dt. */
export interface SimBatch {
  ch: Record<string, number[]>;
  x: number[];
  cc?: number[];
}

/** Expected measured rates (counts/s) at one phase, keyed like the batch. */
export interface ExpectedRates {
  ch: Record<string, number>;
  cc: number;
}

/** What the simulation really is at the present simulated time, for tests of the analysis. */
export interface SimTruth {
  /** Simulated time since creation, ms. */
  timeMs: number;
  drive: DriveStatus;
  /** Mirror displacement from its position at `min`, nm. */
  displacementNm: number;
  /** Phase difference δ, rad, unwrapped (it keeps growing with the drift). */
  phaseRad: number;
  /** The drift part of δ (linear + random walk), rad. */
  driftRad: number;
  /** Optical visibility (mode overlap). */
  visibility: number;
  /** Visibility each output's counts show, (max − min)/(max + min), after darks, accidentals and dead time. */
  countVisibility: Record<string, number>;
  /** One fringe in drive volts at the calibration, λ/(pathFactor·nm/V). */
  periodV: number;
  /** One fringe in drive volts at the piezo's present local slope (hysteresis, nonlinearity). */
  localPeriodV: number;
  /** Lossless output probabilities ½(1 ± V cos δ) at δ, keyed by the output channel keys. */
  probabilities: Record<string, number>;
  /** Expected measured rates at δ. */
  rates: ExpectedRates;
  /** Heralded g2(0) the estimator would give at δ (accidentals included); null without a herald or at a dark output. */
  g2Heralded: number | null;
}

/** Output probabilities of a two-output interferometer: ½(1 + V cos δ) and ½(1 − V cos δ). */
export function outputProbabilities(delta: number, visibility: number): [number, number] {
  const c = visibility * Math.cos(delta);
  return [0.5 * (1 + c), 0.5 * (1 - c)];
}

/** One fringe in drive volts: λ / (pathFactor · nm per V). */
export function fringePeriodV(wavelengthNm: number, pathFactor: number, nmPerVolt: number): number {
  return wavelengthNm / (pathFactor * nmPerVolt);
}

const KEY = /^[a-z0-9_]{1,16}$/;

/** Throws with every problem found; the simulator never runs on a model it cannot honour. */
export function validateModel(m: SimulatorModel): void {
  const errors: string[] = [];
  const need = (ok: boolean, msg: string): void => {
    if (!ok) errors.push(msg);
  };
  const inUnit = (v: number): boolean => v >= 0 && v <= 1;
  const keys = [m.channels.a, m.channels.b, ...(m.channels.herald === undefined ? [] : [m.channels.herald])];
  for (const k of keys) need(KEY.test(k), `channel key "${k}" must match [a-z0-9_]{1,16}`);
  need(new Set(keys).size === keys.length, 'channel keys must differ');
  need((m.source.kind === 'heralded') === (m.channels.herald !== undefined), 'a herald channel key goes with a heralded source, and only then');
  const o = m.optics;
  need(o.wavelengthNm > 0, 'wavelengthNm must be > 0');
  need(o.pathFactor > 0, 'pathFactor must be > 0');
  need(inUnit(o.visibility), 'visibility must be in [0, 1]');
  need(Number.isFinite(o.phaseOffsetRad) && Number.isFinite(o.driftRadPerS), 'phase offset and drift must be finite');
  need(o.driftDiffusionRad2PerS >= 0, 'driftDiffusionRad2PerS must be ≥ 0');
  need(Number.isFinite(m.scan.min) && Number.isFinite(m.scan.max) && m.scan.min < m.scan.max, 'scan needs finite min < max');
  need(m.piezo.nmPerVolt > 0, 'nmPerVolt must be > 0');
  need(m.piezo.hysteresis >= 0 && m.piezo.hysteresis < 0.5, 'hysteresis must be in [0, 0.5)');
  need(m.piezo.nonlinearity >= 0 && m.piezo.nonlinearity < 1, 'nonlinearity must be in [0, 1)');
  need(m.coincidenceWindowNs >= 0, 'coincidenceWindowNs must be ≥ 0');
  const dets: [string, DetectorModel][] = [['a', m.detectors.a], ['b', m.detectors.b]];
  if (m.source.kind === 'coherent') need(m.source.photonRate >= 0, 'photonRate must be ≥ 0');
  else {
    need(m.source.pairRate >= 0, 'pairRate must be ≥ 0');
    need(m.source.g2 >= 0, 'g2 must be ≥ 0');
    dets.push(['herald', m.source.herald]);
  }
  for (const [name, d] of dets) {
    need(inUnit(d.efficiency), `${name} detector efficiency must be in [0, 1]`);
    need(d.darkRate >= 0 && d.deadTimeNs >= 0, `${name} detector dark rate and dead time must be ≥ 0`);
    need(d.afterpulsing >= 0 && d.afterpulsing < 1, `${name} detector afterpulsing must be in [0, 1)`);
  }
  if (errors.length) throw new Error(`invalid simulator model: ${errors.join('; ')}`);
}

/** Expected rates at one value of V·cos δ, in the units the sampler needs (all 1/s). */
interface RateSet {
  /** Reported a/b: singles (laser) or herald-gated clicks (heralded), measured, with afterpulses. */
  a: number;
  b: number;
  /** Herald singles, measured, with afterpulses (0 for a laser). */
  h: number;
  cc: number;
  /** True (photon + dark) singles rates, before dead time, for sampling the singles channels. */
  trueA: number;
  trueB: number;
  trueH: number;
}

export class InterferometerSim {
  /** Channel keys in batch order (outputs first), for the gateway's status message. */
  readonly channels: readonly string[];
  private readonly rng: Rng;
  private readonly piezo: Piezo;
  private readonly drive: ScanDrive;
  /** Phase per nm of displacement, rad/nm. */
  private readonly kPhase: number;
  private readonly windowS: number;
  private readonly deadA: number;
  private readonly deadB: number;
  private readonly deadH: number;
  private readonly scratch: RateSet = { a: 0, b: 0, h: 0, cc: 0, trueA: 0, trueB: 0, trueH: 0 };
  private t = 0;
  /** Random-walk part of the drift, rad. */
  private walk = 0;
  private phases: number[] = [];

  constructor(
    private readonly model: SimulatorModel,
    seed: number,
  ) {
    validateModel(model);
    this.rng = mulberry32(seed);
    const { a, b, herald } = model.channels;
    this.channels = herald === undefined ? [a, b] : [a, b, herald];
    // A piezo amplifier idles at 0 V; clamp into ranges that exclude it.
    const start = Math.min(Math.max(0, model.scan.min), model.scan.max);
    this.piezo = new Piezo(model.piezo, model.scan, start);
    this.drive = new ScanDrive(model.scan, start);
    this.kPhase = (2 * Math.PI * model.optics.pathFactor) / model.optics.wavelengthNm;
    this.windowS = model.coincidenceWindowNs * 1e-9;
    this.deadA = model.detectors.a.deadTimeNs * 1e-9;
    this.deadB = model.detectors.b.deadTimeNs * 1e-9;
    this.deadH = model.source.kind === 'heralded' ? model.source.herald.deadTimeNs * 1e-9 : 0;
  }

  /** Simulated time since creation, ms. */
  get timeMs(): number {
    return this.t;
  }

  /** Applies a sweep/hold/stop at the present simulated time; the error string is for the ack. */
  command(cmd: CommandBody): CommandResult {
    const result = this.drive.command(cmd, this.t);
    this.piezo.moveTo(this.drive.voltageAt(this.t));
    return result;
  }

  /**
   * The next `nBins` bins of `dtMs` each. Counts are drawn bin by bin in a fixed order, so the
   * same seed and commands give the same bins however the time is cut into batches.
   */
  next(nBins: number, dtMs: number): SimBatch {
    if (!Number.isInteger(nBins) || nBins < 1) throw new RangeError('nBins must be a whole number ≥ 1');
    if (!(dtMs > 0) || !Number.isFinite(dtMs)) throw new RangeError('dtMs must be a positive number of ms');
    const { model, rng, piezo, drive, scratch: r } = this;
    const heralded = model.source.kind === 'heralded';
    const withCc = this.windowS > 0;
    const binS = dtMs / 1000;
    const vis = model.optics.visibility;
    const phi0 = model.optics.phaseOffsetRad;
    const driftRate = model.optics.driftRadPerS;
    const walkStep = Math.sqrt(model.optics.driftDiffusionRad2PerS * binS);
    const da = model.detectors.a;
    const db = model.detectors.b;
    const apH = model.source.kind === 'heralded' ? model.source.herald.afterpulsing : 0;
    const chA: number[] = new Array<number>(nBins);
    const chB: number[] = new Array<number>(nBins);
    const chH: number[] = heralded ? new Array<number>(nBins) : [];
    const cc: number[] = withCc ? new Array<number>(nBins) : [];
    const x: number[] = new Array<number>(nBins);
    const phases: number[] = new Array<number>(nBins);

    for (let i = 0; i < nBins; i++) {
      const t0 = this.t;
      const t1 = t0 + dtMs;
      const tc = t0 + dtMs / 2;
      const drift = this.walk + (driftRate * tc) / 1000;
      // Average cos δ over the piezo steps inside the bin (one segment unless a sweep steps).
      let sumCos = 0;
      let t = t0;
      while (t < t1) {
        const tn = Math.min(t1, drive.nextChangeAfter(t));
        piezo.moveTo(drive.voltageAt(t));
        const delta = this.kPhase * piezo.displacementNm + phi0 + drift;
        sumCos += Math.cos(delta) * (tn - t);
        if (t <= tc && tc < tn) phases[i] = delta;
        t = tn;
      }
      x[i] = drive.voltageAt(tc);
      this.fillRates((vis * sumCos) / dtMs, r);
      let a: number;
      let b: number;
      if (heralded) {
        chH[i] = clicks(rng, r.trueH, this.deadH, apH, binS);
        a = poisson(rng, r.a * binS);
        b = poisson(rng, r.b * binS);
      } else {
        a = clicks(rng, r.trueA, this.deadA, da.afterpulsing, binS);
        b = clicks(rng, r.trueB, this.deadB, db.afterpulsing, binS);
      }
      chA[i] = a;
      chB[i] = b;
      // A coincidence needs a click on each side, so cc ≤ min(a, b) even where independent draws disagree.
      if (withCc) cc[i] = Math.min(poisson(rng, r.cc * binS), a, b);
      if (walkStep > 0) this.walk += walkStep * gaussian(rng);
      this.t = t1;
    }
    piezo.moveTo(drive.voltageAt(this.t));
    this.phases = phases;

    const ch: Record<string, number[]> = { [model.channels.a]: chA, [model.channels.b]: chB };
    if (model.channels.herald !== undefined) ch[model.channels.herald] = chH;
    return withCc ? { ch, x, cc } : { ch, x };
  }

  /** Phase difference δ at each bin centre of the last batch, rad (truth, not for the wire). */
  lastPhases(): readonly number[] {
    return this.phases;
  }

  /** Expected measured rates at phase δ with the present settings. */
  expectedRates(delta: number): ExpectedRates {
    return this.toExpected(this.fillRates(this.model.optics.visibility * Math.cos(delta), this.emptyRates()));
  }

  truth(): SimTruth {
    const { model, piezo } = this;
    const { a, b, herald } = model.channels;
    const drift = this.walk + (model.optics.driftRadPerS * this.t) / 1000;
    const phaseRad = this.kPhase * piezo.displacementNm + model.optics.phaseOffsetRad + drift;
    const vis = model.optics.visibility;
    const [pa, pb] = outputProbabilities(phaseRad, vis);
    const now = this.fillRates(vis * Math.cos(phaseRad), this.emptyRates());
    const bright = this.fillRates(vis, this.emptyRates());
    const dark = this.fillRates(-vis, this.emptyRates());
    const contrast = (hi: number, lo: number): number => (hi + lo > 0 ? (hi - lo) / (hi + lo) : 0);
    return {
      timeMs: this.t,
      drive: this.drive.status(this.t),
      displacementNm: piezo.displacementNm,
      phaseRad,
      driftRad: drift,
      visibility: vis,
      countVisibility: { [a]: contrast(bright.a, dark.a), [b]: contrast(dark.b, bright.b) },
      periodV: fringePeriodV(model.optics.wavelengthNm, model.optics.pathFactor, model.piezo.nmPerVolt),
      localPeriodV: fringePeriodV(model.optics.wavelengthNm, model.optics.pathFactor, piezo.slopeNmPerVolt),
      probabilities: { [a]: pa, [b]: pb },
      rates: this.toExpected(now),
      g2Heralded: herald !== undefined && now.a * now.b > 0 ? (now.cc * now.h) / (now.a * now.b) : null,
    };
  }

  private emptyRates(): RateSet {
    return { a: 0, b: 0, h: 0, cc: 0, trueA: 0, trueB: 0, trueH: 0 };
  }

  private toExpected(r: RateSet): ExpectedRates {
    const { a, b, herald } = this.model.channels;
    const ch: Record<string, number> = { [a]: r.a, [b]: r.b };
    if (herald !== undefined) ch[herald] = r.h;
    return { ch, cc: r.cc };
  }

  /**
   * Expected rates for V·cos δ = vc (the bin's average when the piezo steps within it). Output
   * probabilities ½(1 ± V cos δ) (Gerry & Knight, Introductory Quantum Optics, ch. 6); singles
   * pass through non-paralyzable dead time (detector.ts); accidentals are R₁·R₂·Δt.
   */
  private fillRates(vc: number, r: RateSet): RateSet {
    const { source, detectors } = this.model;
    const pa = 0.5 * (1 + vc);
    const pb = 0.5 * (1 - vc);
    const w = this.windowS;
    const da = detectors.a;
    const db = detectors.b;
    const photons = source.kind === 'coherent' ? source.photonRate : source.pairRate;
    r.trueA = photons * da.efficiency * pa + da.darkRate;
    r.trueB = photons * db.efficiency * pb + db.darkRate;
    const liveA = liveFraction(r.trueA, this.deadA);
    const liveB = liveFraction(r.trueB, this.deadB);
    const singlesA = r.trueA * liveA * (1 + da.afterpulsing);
    const singlesB = r.trueB * liveB * (1 + db.afterpulsing);
    if (source.kind === 'coherent') {
      r.a = singlesA;
      r.b = singlesB;
      r.h = 0;
      r.trueH = 0;
      // Laser light has g2(0) = 1: every coincidence is accidental.
      r.cc = singlesA * singlesB * w;
      return r;
    }
    const hd = source.herald;
    r.trueH = source.pairRate * hd.efficiency + hd.darkRate;
    const liveH = liveFraction(r.trueH, this.deadH);
    r.h = r.trueH * liveH * (1 + hd.afterpulsing);
    // A heralded photon counts only if both its detector and the herald's are live.
    const pairsHeralded = source.pairRate * hd.efficiency * liveH;
    const trueGa = pairsHeralded * da.efficiency * pa * liveA;
    const trueGb = pairsHeralded * db.efficiency * pb * liveB;
    r.a = trueGa + r.h * singlesA * w;
    r.b = trueGb + r.h * singlesB * w;
    // Multi-pair triples at the source's g2, plus a heralded photon on one side meeting an
    // unrelated click on the other (the fully accidental threefold, ∝ Δt², is negligible).
    r.cc = (r.h > 0 ? (source.g2 * trueGa * trueGb) / r.h : 0) + (trueGa * singlesB + trueGb * singlesA) * w;
    return r;
  }
}

/** A simulator for `model`, deterministic from `seed` (a 32-bit integer). */
export function createSimulator(model: SimulatorModel, seed: number): InterferometerSim {
  return new InterferometerSim(model, seed);
}
