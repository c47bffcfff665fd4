// The live page's rates history, read once when it opens, into the rate ring.
import { coveredFor, type CountsAnswer } from './api.ts';
import type { RateRing } from './rate-ring.ts';

/**
 * How far back from a channel's newest stored bucket a backfilled bucket may still have been
 * filling (ms): a gateway's batch covers up to a second and takes a moment to store.
 */
export const BACKFILL_SETTLE_MS = 2_000;
/**
 * How far past this browser's clock the backfill reads (ms). The browser's clock may lag the
 * gateways'; buckets past the newest data come back empty and are skipped.
 */
export const BACKFILL_CLOCK_SLACK_MS = 60_000;

/**
 * Adds the answer's buckets to the ring, filling only buckets live bins have not reached. Channel
 * by channel, since a bench's channels may come from several gateways: a bucket a channel has no
 * bins for (null) is left out for that channel rather than drawn as zero, and the buckets near the
 * channel's own newest one are provisional (live bins replace them), judged by the data's times
 * rather than this browser's clock. Returns whether any bucket held counts.
 */
export function backfillRates(ring: RateRing, answer: Pick<CountsAnswer, 't0' | 'step' | 'channels'> & Partial<Pick<CountsAnswer, 'coveredMs'>>): boolean {
  let any = false;
  for (const [key, values] of Object.entries(answer.channels)) {
    // A bucket its gateway recorded only in part (a restart's gap) goes in as bins of the time
    // recorded, so the ring divides by that instead of drawing a dip over the whole bucket.
    const covered = coveredFor(answer.coveredMs, key);
    let last = values.length - 1;
    while (last >= 0 && values[last] == null) last--;
    if (last < 0) continue;
    any = true;
    const settledBefore = answer.t0 + (last + 1) * answer.step - BACKFILL_SETTLE_MS;
    for (let i = 0; i <= last; i++) {
      const v = values[i];
      if (v == null) continue;
      const t0 = answer.t0 + i * answer.step;
      const ms = covered[i];
      if (ms && ms < answer.step) {
        // After a gap the recorded part is the bucket's end (the stream resumed in it), else its start.
        const at = i > 0 && values[i - 1] == null ? t0 + answer.step - ms : t0;
        ring.add(at, ms, { [key]: [v] }, true, t0 + answer.step > settledBefore);
      } else ring.add(t0, answer.step, { [key]: [v] }, true, t0 + answer.step > settledBefore);
    }
  }
  return any;
}
