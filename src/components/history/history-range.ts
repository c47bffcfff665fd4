import { coveredFor, type CountsAnswer } from '../../lib/client/api.ts';

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
