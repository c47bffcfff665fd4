// Computes a bench's live figures from its recent bins, channel settings and latest sweep fits.
// No I/O: the analysis service feeds it and pushes the result.
import { correctRate, rateFromCounts } from '../../analysis/corrections.ts';
import { countsBeforeDeadTime } from '../../analysis/dead-time.ts';
import { driftRate, normalizedDifference, phaseAtHold, quadratureError, unfoldPhase } from '../../analysis/phase.ts';
import { g2FromCoincidences, heraldedAlpha, mandelQ } from '../../analysis/photon-stats.ts';
import { envelopeVisibility, runningVisibility, type VisibilityPoint } from '../../analysis/running-visibility.ts';
import { phaseNoise, phaseSensitivity } from '../../analysis/sensitivity.ts';
import type { BenchFigures, ChannelFigures } from '../../bench-figures.ts';
import { channelDeadTime, type ChannelCalibration } from '../../channel-calibration.ts';
import type { RecentBins } from './recent-bins.ts';

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
    if (env && env.warnings.length === 0 && Number.isFinite(env.err)) visibility = { value: env.value, err: env.err, source: 'envelope', net: outA?.darkRate !== null };
  }

  // Contrast and phase over the last second.
  let contrast: number | null = null;
  let phase: BenchFigures['phase'] = null;
  let shotNoise: BenchFigures['shotNoise'] = null;
  let phaseReading: { t: number; theta: number } | null = null;
  const la = outA ? recent.series(outA.gateway, outA.key, PHASE_WINDOW_MS, to) : null;
  const lb = outB ? recent.series(outB.gateway, outB.key, PHASE_WINDOW_MS, to) : null;
  if (la && lb && la.counts.length === lb.counts.length && la.counts.length > 0) {
    const na = sum(la.counts);
    const nb = sum(lb.counts);
    if (na + nb > 0) contrast = (na - nb) / (na + nb);
    const v = visibility?.value;
    if (holding && v && v > 0.05) {
      const bins = la.counts.length;
      // Fitted V is the true counts' (the fit models the dead time): the phase is read from the
      // counts the detectors would have given without it, scaled by the second's true/measured.
      const seconds = (bins * la.dtMs) / 1000;
      const fa = deadTimeFactor(outA, na, seconds);
      const fb = deadTimeFactor(outB, nb, seconds);
      const cal = { visibility: v, efficiencyRatio, darkA: perBinDark(outA, la.dtMs) * bins, darkB: perBinDark(outB, lb.dtMs) * bins };
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
      // Shot-noise comparison near mid-fringe only, where the per-bin phase is linear in the counts.
      const d = normalizedDifference(na * fa, nb * fb, cal);
      if (Math.abs(d.value) < 0.5 * v && bins >= 10) {
        const perBin = { visibility: v, efficiencyRatio, darkA: perBinDark(outA, la.dtMs), darkB: perBinDark(outB, lb.dtMs) };
        const eps = new Float64Array(bins);
        for (let i = 0; i < bins; i++) eps[i] = quadratureError((la.counts[i] as number) * fa, (lb.counts[i] as number) * fb, perBin).value;
        // The limits count signal photons: dark counts are noise of their own, not light.
        const photonsPerBin = (na + nb) / bins - perBin.darkA - perBin.darkB;
        if (eps.every(Number.isFinite) && photonsPerBin > 0) {
          const s = phaseSensitivity(phaseNoise(eps), photonsPerBin, v);
          if ([s.measured, s.shotNoiseLimit, s.ratio, s.dB, s.visibilityLimit].every(Number.isFinite)) {
            // A standard deviation from n bins is good to 1/√(2(n − 1)) (Gaussian noise, common practice).
            const ratioErr = s.ratio / Math.sqrt(2 * (bins - 1));
            shotNoise = { measuredRad: s.measured, limitRad: s.shotNoiseLimit, ratio: s.ratio, ratioErr, dB: s.dB, binMs: la.dtMs, visibilityLimitRad: s.visibilityLimit };
          }
        }
      }
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
