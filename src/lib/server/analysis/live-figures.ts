// Computes a bench's live figures from its recent bins, channel settings and latest sweep fits.
// No I/O: the analysis service feeds it and pushes the result.
import { correctRate, rateFromCounts } from '../../analysis/corrections.ts';
import { countsBeforeDeadTime } from '../../analysis/dead-time.ts';
import { driftRate, normalizedDifference, phaseAtHold, quadratureError, unfoldPhase } from '../../analysis/phase.ts';
import { g2FromCoincidences, heraldedAlpha, mandelQ } from '../../analysis/photon-stats.ts';
import { envelopeVisibility, runningVisibility, type VisibilityPoint } from '../../analysis/running-visibility.ts';
import { phaseSensitivity, type NoiseSegment } from '../../analysis/sensitivity.ts';
import type { BenchFigures, ChannelFigures } from '../../bench-figures.ts';
import { channelDeadTime, type ChannelCalibration } from '../../channel-calibration.ts';
import type { ChannelSeries, RecentBins } from './recent-bins.ts';

export type ChannelSettings = ChannelCalibration;

/** One fitted pass's visibility, whether it is net of darks, and when the pass ended (ms; the age the pages give it, as the fringe card does). */
export type SweepPoint = VisibilityPoint & { net: boolean; endMs?: number };

export interface FiguresInput {
  benchId: string;
  now: number;
  windowMs: number;
  channels: ChannelSettings[];
  coincidenceWindowNs: number;
  recent: RecentBins;
  /** Latest sweep fits as shown (shownVisibility), each raw or net. */
  sweepPoints: SweepPoint[];
  /** Phase readings at hold so far (s, folded θ ∈ [0, π]), for the drift rate; the caller keeps ~60 s. */
  phaseHistory: { t: number; theta: number }[];
}

/**
 * A sweep fit older than this no longer stands for the current visibility, ms. Long enough for the
 * usual sweep, hold at mid-fringe, read the phase and its noise: alignment drifts over hours, and
 * the figure says how old its newest pass is.
 */
export const SWEEP_FRESH_MS = 30 * 60_000;
/** Phase is read over the last second while the drive holds still, ms. */
const PHASE_WINDOW_MS = 1_000;
/**
 * The phase noise is read in segments of this length, each about its own straight line, pooled
 * over the seconds the drive has held within the live window, ms. One second of 10 ms bins reads
 * the noise to ±7% (1σ); the window's ten to ±2.3%.
 */
const NOISE_SEGMENT_MS = 1_000;
/** Fewer bins than this in a segment are not read (a short stretch between gaps); bins of over 100 ms make segments longer, bins. */
const MIN_SEGMENT_BINS = 10;
/** A segment is read only this near mid-fringe, |D| < this·V, where the per-bin phase is linear in the counts. */
const MID_FRINGE_BAND = 0.5;


/** True over measured counts of a channel through its dead time at this rate; 1 without one or past saturation. */
function deadTimeFactor(c: ChannelSettings | undefined, counts: number, seconds: number): number {
  const dt = c ? channelDeadTime(c) : null;
  return dt && counts > 0 ? countsBeforeDeadTime(counts, seconds, dt.tau, dt.model) / counts : 1;
}

/** A figure with its error, or null when either is not a finite number (the live schema refuses those). */
function finite<T extends { value: number; err: number }>(m: T | null | undefined): T | null {
  return m && Number.isFinite(m.value) && Number.isFinite(m.err) ? m : null;
}

function sum(a: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] as number;
  return s;
}

/** Index of the first bin of the trailing run at the drive's present position. */
function heldFrom(x: Float64Array): number {
  let i = x.length - 1;
  while (i > 0 && x[i - 1] === x[x.length - 1]) i--;
  return Math.max(0, i);
}

/** Whether two series of one gateway's window hold the same bins (same length, bin width and gaps). */
function sameBins(p: ChannelSeries, q: ChannelSeries): boolean {
  return p.counts.length === q.counts.length && p.dtMs === q.dtMs && p.gapsBefore.join() === q.gapsBefore.join();
}

/**
 * Bin ranges [start, end) within [from, n) of `length` (≥ MIN_SEGMENT_BINS) bins or fewer but never
 * fewer than MIN_SEGMENT_BINS, cut back from the newest bin and never across a gap (the bins on
 * either side of one are not neighbours in time, so no straight line spans it).
 */
function segmentsOf(from: number, n: number, gapsBefore: readonly number[], length: number): [number, number][] {
  const out: [number, number][] = [];
  const stops = [from, ...gapsBefore.filter((g) => g > from && g < n), n];
  for (let r = stops.length - 1; r > 0; r--) {
    const lo = stops[r - 1] as number;
    for (let end = stops[r] as number; end - lo >= MIN_SEGMENT_BINS; end -= length) out.push([Math.max(lo, end - length), end]);
  }
  return out;
}

export function computeFigures(input: FiguresInput): { figures: BenchFigures; phaseReading: { t: number; theta: number } | null } {
  const { recent, windowMs } = input;
  const to = recent.latestEnd();
  const channels: ChannelFigures[] = [];
  const totals = new Map<string, { counts: number; seconds: number; dtMs: number; series: Float64Array }>();

  for (const c of input.channels) {
    const s = recent.series(c.gateway, c.key, windowMs, to);
    if (!s || s.counts.length === 0) continue;
    const seconds = (s.counts.length * s.dtMs) / 1000;
    const counts = sum(s.counts);
    totals.set(c.role === 'aux' ? `aux:${c.gateway}/${c.key}` : c.role, { counts, seconds, dtMs: s.dtMs, series: s.counts });
    const measured = rateFromCounts(counts, seconds);
    const deadTime = channelDeadTime(c);
    const corr = correctRate({
      measured,
      ...(c.darkRate !== null ? { dark: { value: c.darkRate, err: c.darkRateErr ?? 0 } } : {}),
      ...(deadTime ? { deadTime } : {}),
    });
    // A dark channel (shutter closed, detector off, no heralds) has no Q.
    // Q needs pairs of bins adjacent in time; a window broken by gaps into single bins has none.
    const q = s.counts.length - 1 - s.gapsBefore.length >= 10 && counts > 0 ? mandelQ(s.counts, s.gapsBefore).q : null;
    channels.push({
      channel: `${c.gateway}/${c.key}`,
      role: c.role,
      label: c.label,
      rateRaw: measured.value,
      rateCorrected: corr.ok ? finite(corr.net) : null,
      deadTimeLoss: corr.ok && c.deadTimeNs ? corr.lossFraction : null,
      mandelQ: finite(q),
      warning: corr.ok ? (corr.warnings[0] ?? null) : corr.reason,
    });
  }

  const outA = input.channels.find((c) => c.role === 'out_a');
  const outB = input.channels.find((c) => c.role === 'out_b');
  const herald = input.channels.find((c) => c.role === 'herald');
  const perBinDark = (c: ChannelSettings | undefined, dtMs: number) => ((c?.darkRate ?? 0) * dtMs) / 1000;
  const efficiencyRatio = outA && outB && outA.efficiency > 0 ? outB.efficiency / outA.efficiency : 1;

  // The darks to take off the counts a phase is read from: none beside a raw V (a pass fitted
  // before the darks were calibrated), whose fringe holds them, so that D/V compares like with like.
  const darksOf = (v: NonNullable<BenchFigures['visibility']>, c: ChannelSettings | undefined, dtMs: number) => (v.net ? perBinDark(c, dtMs) : 0);

  // Visibility: the latest sweep fits while fresh, else the envelope over the window.
  let visibility: BenchFigures['visibility'] = null;
  const fresh = input.sweepPoints.filter((p) => input.now - p.timeMs < SWEEP_FRESH_MS);
  // Only fits of the newest one's kind are averaged: raw and net V of one fringe differ by the
  // darks, and a calibration set or cleared in between leaves both kinds in the window.
  const newest = fresh.reduce<SweepPoint | null>((a, p) => (!a || p.timeMs >= a.timeMs ? p : a), null);
  const fitted = newest ? finite(runningVisibility(fresh.filter((p) => p.net === newest.net))) : null;
  if (fitted && newest) {
    // The mean steadies the phase reading below; the newest pass alone is what the screens lead
    // with, since it shows the last touch of an alignment at once (visibilityLines in Readouts.tsx).
    const own = finite(newest);
    const shown = own && { value: own.value, err: own.err, ...(own.endMs !== undefined && { endMs: own.endMs }) };
    visibility = { value: fitted.value, err: fitted.err, source: 'sweep', net: newest.net, latestPassMs: newest.timeMs, passes: fitted.n, ...(shown && { newest: shown }) };
  }
  const sa = outA ? recent.series(outA.gateway, outA.key, windowMs, to) : null;
  const sb = outB ? recent.series(outB.gateway, outB.key, windowMs, to) : null;
  const scan = outA ? recent.scan(outA.gateway, PHASE_WINDOW_MS, to) : null;
  const holding = !scan || scan.counts.every((v) => v === scan.counts[0]);
  if (!visibility && sa && sb && sa.counts.length === sb.counts.length && holding) {
    const env = envelopeVisibility(sa.counts, sb.counts, { efficiencyRatio, darkA: perBinDark(outA, sa.dtMs), darkB: perBinDark(outB, sb.dtMs) });
    if (env && env.warnings.length === 0 && Number.isFinite(env.err)) visibility = { value: env.value, err: env.err, source: 'envelope', net: outA?.darkRate != null || outB?.darkRate != null };
  }

  // Contrast and phase over the last second.
  let contrast: number | null = null;
  let phase: BenchFigures['phase'] = null;
  let phaseReading: { t: number; theta: number } | null = null;
  const la = outA ? recent.series(outA.gateway, outA.key, PHASE_WINDOW_MS, to) : null;
  const lb = outB ? recent.series(outB.gateway, outB.key, PHASE_WINDOW_MS, to) : null;
  if (la && lb && la.counts.length === lb.counts.length && la.counts.length > 0) {
    const na = sum(la.counts);
    const nb = sum(lb.counts);
    if (na + nb > 0) contrast = (na - nb) / (na + nb);
    const v = visibility?.value;
    if (holding && visibility && v && v > 0.05) {
      const bins = la.counts.length;
      // Fitted V is the true counts' (the fit models the dead time): the phase is read from the
      // counts the detectors would have given without it, scaled by the second's true/measured.
      const seconds = (bins * la.dtMs) / 1000;
      const fa = deadTimeFactor(outA, na, seconds);
      const fb = deadTimeFactor(outB, nb, seconds);
      const cal = { visibility: v, efficiencyRatio, darkA: darksOf(visibility, outA, la.dtMs) * bins, darkB: darksOf(visibility, outB, lb.dtMs) * bins };
      const theta = phaseAtHold(na * fa, nb * fb, cal);
      if (Number.isFinite(theta.value)) {
        // Readings at a fringe extreme (D/V clipped to ±1) still mark the crossings the drift is
        // unfolded by, but their error is unbounded: no phase figure is shown from them.
        phaseReading = { t: to / 1000, theta: theta.value };
        const history = [...input.phaseHistory, phaseReading];
        const drift = history.length >= 5 ? driftRate(history.map((h) => h.t), unfoldPhase(history.map((h) => h.theta))) : null;
        const driftOk = drift !== null && Number.isFinite(drift.value);
        if (Number.isFinite(theta.err)) {
          phase = { value: theta.value, err: theta.err, driftRadPerS: driftOk ? drift.value : null, ...(driftOk && Number.isFinite(drift.err) ? { driftErrRadPerS: drift.err } : {}) };
        }
      }
    }
  }

  // Phase noise against shot noise, pooled over the seconds of the present hold near mid-fringe:
  // the window's bins from where the drive came to its present position (all of them for a bench
  // that sends no positions).
  let shotNoise: BenchFigures['shotNoise'] = null;
  const sx = outA ? recent.scan(outA.gateway, windowMs, to) : null;
  if (holding && outA && outB && visibility && visibility.value > 0.05 && sa && sb && sameBins(sa, sb) && (!sx || sameBins(sa, sx))) {
    const v = visibility.value;
    const dt = sa.dtMs;
    const perBin = { visibility: v, efficiencyRatio, darkA: darksOf(visibility, outA, dt), darkB: darksOf(visibility, outB, dt) };
    const segments: NoiseSegment[] = [];
    let bins = 0;
    for (const [start, end] of segmentsOf(sx ? heldFrom(sx.counts) : 0, sa.counts.length, sa.gapsBefore, Math.max(MIN_SEGMENT_BINS, Math.round(NOISE_SEGMENT_MS / dt)))) {
      const a = sa.counts.subarray(start, end);
      const b = sb.counts.subarray(start, end);
      const n = end - start;
      const na = sum(a);
      const nb = sum(b);
      const seconds = (n * dt) / 1000;
      // Fitted V is the true counts' (see the phase above): each segment's counts are scaled to them.
      const fa = deadTimeFactor(outA, na, seconds);
      const fb = deadTimeFactor(outB, nb, seconds);
      const d = normalizedDifference(na * fa, nb * fb, { ...perBin, darkA: perBin.darkA * n, darkB: perBin.darkB * n });
      if (!(Math.abs(d.value) < MID_FRINGE_BAND * v)) continue;
      const eps = new Float64Array(n);
      for (let i = 0; i < n; i++) eps[i] = quadratureError((a[i] as number) * fa, (b[i] as number) * fb, perBin).value;
      // The shot-noise limit counts signal photons; the floor also the darks, Poisson noise with
      // no fringe in them that every reading of these detectors carries.
      const signalA = na / n - perBin.darkA;
      const signalB = nb / n - perBin.darkB;
      if (!eps.every(Number.isFinite) || !(signalA + signalB > 0)) continue;
      segments.push({ phases: eps, signalA, signalB, darkA: perBin.darkA, darkB: perBin.darkB, phase: Math.acos(d.value / v) });
      bins += n;
    }
    const s = phaseSensitivity(segments, v);
    if (s && [s.measured, s.shotNoiseLimit, s.ratio, s.ratioErr, s.dB, s.visibilityLimit].every(Number.isFinite)) {
      shotNoise = { measuredRad: s.measured, limitRad: s.shotNoiseLimit, ratio: s.ratio, ratioErr: s.ratioErr, dB: s.dB, binMs: dt, visibilityLimitRad: s.visibilityLimit, bins, ...(perBin.darkA + perBin.darkB > 0 && Number.isFinite(s.darkFreeLimit) ? { darkFreeLimitRad: s.darkFreeLimit } : {}) };
    }
  }

  // g2(0) (laser: singles and twofold coincidences) or α (heralded: gated counts and triples),
  // with the accidentals (or the triples expected without anticorrelation) summed bin by bin.
  let g2: BenchFigures['g2'] = null;
  let alpha: BenchFigures['alpha'] = null;
  const cc = outA ? recent.coincidences(outA.gateway, windowMs, to) : null;
  const ta = totals.get('out_a');
  const tb = totals.get('out_b');
  const th = herald ? totals.get('herald') : undefined;
  const aligned = (t: { series: Float64Array; dtMs: number } | undefined) => t !== undefined && cc !== null && t.series.length === cc.counts.length && t.dtMs === cc.dtMs;
  if (cc && ta && tb && ta.counts > 0 && tb.counts > 0 && aligned(ta) && aligned(tb)) {
    const coincidences = sum(cc.counts);
    // Few coincidences (accidentals at a fraction of a count per window, as on slow InGaAs
    // benches, or no triples from a good single-photon source): the Gaussian error collapses to 0
    // at 0 counts, so quote the exact Garwood interval's half-width instead.
    const few = coincidences < 20;
    // Sparse singles that never click in the same bin leave no accidentals to compare with: the
    // estimators give none, and the figure stays empty while the rest of the bench reads.
    if (herald) {
      const r = th && th.counts > 0 && aligned(th) ? heraldedAlpha({ gates: th.series, gateTransmitted: ta.series, gateReflected: tb.series, triples: coincidences }) : null;
      if (r) alpha = finite({ value: r.alpha.value, err: few ? (r.triplesInterval.upper - r.triplesInterval.lower) / 2 : r.alpha.err });
    } else {
      const r = g2FromCoincidences({ counts1: ta.series, counts2: tb.series, binS: cc.dtMs / 1000, coincidences, windowS: input.coincidenceWindowNs * 1e-9 });
      if (r) {
        const err = few ? (r.interval.upper - r.interval.lower) / 2 : r.g2.err;
        g2 = finite({ value: r.g2.value, err }) && Number.isFinite(r.accidentals) ? { value: r.g2.value, err, accidentals: r.accidentals } : null;
      }
    }
  }

  return {
    figures: { benchId: input.benchId, at: to || input.now, windowMs, channels, visibility, holding, phase, contrast, g2, alpha, shotNoise },
    phaseReading,
  };
}
