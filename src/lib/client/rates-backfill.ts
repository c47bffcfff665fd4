// The live page's rates history, read once when it opens, into the rate ring.
import type { CountsAnswer } from './api.ts';
import type { RateRing } from './rate-ring.ts';

/**
 * How far back from the newest stored bucket a backfilled bucket may still have been filling
 * (ms): a gateway's batch covers up to a second and takes a moment to store.
 */
export const BACKFILL_SETTLE_MS = 2_000;
/**
 * How far past this browser's clock the backfill reads (ms). The browser's clock may lag the
 * gateways'; buckets past the newest data come back empty and are skipped.
 */
export const BACKFILL_CLOCK_SLACK_MS = 60_000;

/**
 * Adds the answer's buckets to the ring, filling only buckets live bins have not reached. Buckets
 * near the newest one are provisional, judged by the data's own times, not this browser's clock:
 * live bins replace them. Empty buckets (null) are left out rather than drawn as zeros. Returns
 * whether any bucket held counts.
 */
export function backfillRates(ring: RateRing, answer: CountsAnswer): boolean {
  const keys = Object.keys(answer.channels);
  const first = keys[0] ? answer.channels[keys[0]]! : [];
  let last = -1;
  for (let i = first.length - 1; i >= 0; i--) {
    if (first[i] != null) {
      last = i;
      break;
    }
  }
  if (last < 0) return false;
  const settledBefore = answer.t0 + (last + 1) * answer.step - BACKFILL_SETTLE_MS;
  for (let i = 0; i <= last; i++) {
    if (first[i] == null) continue;
    const one: Record<string, number[]> = {};
    for (const k of keys) one[k] = [answer.channels[k]![i] ?? 0];
    const t0 = answer.t0 + i * answer.step;
    ring.add(t0, answer.step, one, true, t0 + answer.step > settledBefore);
  }
  return true;
}
