import { coveredFor, type CountsAnswer } from '../../lib/client/api.ts';

// Steps the history asks the counts API for. Every one is a multiple of the usual bin widths
// (1, 10, 100 ms), so the server can sum bins into it exactly.
const NICE_STEPS_MS = [100, 200, 500, 1_000, 2_000, 5_000, 10_000, 30_000, 60_000, 120_000, 300_000, 600_000, 1_800_000, 3_600_000, 86_400_000];

/** Smallest nice step that keeps the points at or under one per `pixels`. */
export function pickStep(spanMs: number, pixels: number): number {
  const want = spanMs / Math.max(100, pixels);
  return NICE_STEPS_MS.find((s) => s >= want) ?? NICE_STEPS_MS[NICE_STEPS_MS.length - 1]!;
}

/** Points wanted in a stability series: τ up to τ₀·2⁹ (edf ≈ 4 there) with many degrees of freedom at short τ. */
const STABILITY_POINTS = 2000;
/** Above this span, ms, the series is read at whole seconds, which the 1 s rollups serve fast. */
const ROLLUP_SPAN_MS = 5 * 60_000;

/** τ₀ (ms) for the stability of a span: about 2000 buckets, whole seconds beyond a few minutes. */
export function stabilityStep(spanMs: number): number {
  const step = pickStep(spanMs, STABILITY_POINTS);
  return spanMs > ROLLUP_SPAN_MS ? Math.max(1_000, step) : step;
}

/**
 * A request range widened to whole buckets: the counts API aligns buckets to multiples of the step,
 * so a range starting or ending inside one would sum only part of its time into it and the curve
 * would dip at both ends.
 */
export function wholeBuckets(from: number, to: number, step: number): { from: number; to: number } {
  return { from: Math.floor(from / step) * step, to: Math.ceil(to / step) * step };
}

/**
 * Rates (counts/s) of one channel ("<gateway>/<key>") of a counts answer: each bucket's sum over the
 * time its gateway's stored bins cover there, so a bucket only partly recorded (a restart's gap, the
 * first and last of a recording) shows the rate it had instead of a dip towards zero. Buckets
 * without bins stay null (a gap, not a zero). A bucket still filling at `asOf` (its end in the
 * future when the answer came) is left out too: a later read may add bins, so it is provisional.
 */
export function channelRates(answer: Pick<CountsAnswer, 't0' | 'step' | 'channels' | 'coveredMs'>, channel: string, asOf: number): (number | null)[] {
  const sums = Object.hasOwn(answer.channels, channel) ? answer.channels[channel]! : [];
  const covered = coveredFor(answer.coveredMs, channel);
  return sums.map((v, i) => {
    const ms = covered[i];
    return v == null || !ms || answer.t0 + (i + 1) * answer.step > asOf ? null : (v * 1000) / ms;
  });
}
