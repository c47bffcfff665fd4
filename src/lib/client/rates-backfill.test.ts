import { describe, expect, it } from 'vitest';
import { RateRing } from './rate-ring.ts';
import { BACKFILL_SETTLE_MS, backfillRates } from './rates-backfill.ts';

const rate = (ring: RateRing) => [...ring.view(0).y[0]!].map((r) => Math.round(r));

// Rate = counts / time covered per bucket (common practice for binned counting, as in rate-ring.test.ts).
describe('rates backfill', () => {
  // Buckets of 100 ms from t = 1,000,000 ms: 30 full ones (10 counts: 100 /s), then a last one read
  // while half its bins were stored, then buckets past the newest data (the read reaches past this
  // browser's clock).
  const answer = {
    t0: 1_000_000,
    step: 100,
    channels: { a: [...Array<number>(30).fill(10), 5, null, null] },
  };

  it('judges which buckets may still be filling by the newest stored bucket, whatever the clock says', () => {
    const ring = new RateRing(['a']);
    expect(backfillRates(ring, answer)).toBe(true);
    expect(rate(ring)).toEqual([...Array<number>(30).fill(100), 50]);
    // Live bins arrive from 1,001,000 on. The newest bucket ends at 1,003,100, so buckets ending
    // after 1,001,100 are provisional and become what live says (200 /s); the one before is
    // settled, and a live bin there adds to it as any overlap would ((10 + 20) / 0.2 s = 150 /s).
    expect(1_000_000 + 31 * 100 - BACKFILL_SETTLE_MS).toBe(1_001_100);
    for (let t = 1_001_000; t < 1_003_100; t += 100) ring.add(t, 100, { a: [20] });
    expect(rate(ring)).toEqual([...Array<number>(10).fill(100), 150, ...Array<number>(20).fill(200)]);
  });

  it('divides a bucket recorded only in part by the time recorded in it, so a restart leaves no dip', () => {
    const ring = new RateRing(['gw/a']);
    // 100 /s throughout; the third bucket holds 40 ms of bins before a restart's gap.
    backfillRates(ring, { t0: 0, step: 100, channels: { 'gw/a': [10, 10, 4, null, 10, 10, 10] }, coveredMs: { gw: [100, 100, 40, 0, 100, 100, 100] } });
    expect(rate(ring)).toEqual(Array<number>(6).fill(100));
  });

  it('puts the recorded part of a bucket after a gap at the bucket\'s end, where the stream resumed', () => {
    // 1 s buckets (the fallback step) against the ring's 100 ms: where the part lands shows.
    const ring = new RateRing(['gw/a']);
    backfillRates(ring, { t0: 0, step: 1_000, channels: { 'gw/a': [100, null, 30] }, coveredMs: { gw: [1_000, 0, 300] } });
    const starts = [...ring.view(0).x].map((s) => Math.round(s * 1000));
    expect(starts.slice(10)).toEqual([2_700, 2_800, 2_900]);
    expect(rate(ring)).toEqual(Array<number>(13).fill(100));
  });

  it('takes each channel by itself: one with no bins, one with gaps, one that lags', () => {
    const ring = new RateRing(['gw-a/a', 'gw-b/a', 'gw-c/a']);
    const got = backfillRates(ring, {
      t0: 0,
      step: 100,
      channels: {
        'gw-a/a': [null, null, null, null, null, null], // its gateway was off the whole window
        'gw-b/a': [10, 10, null, 10, 10, 10],
        'gw-c/a': [10, 10, 10, null, null, null], // its batches come later than gw-b's
      },
    });
    expect(got).toBe(true);
    const v = ring.view(0);
    const round = (y: Float64Array) => [...y].map((r) => Math.round(r));
    expect([...v.x]).toEqual([0, 0.1, 0.2, 0.3, 0.4, 0.5]);
    // A bucket without bins of a channel keeps that channel's last rate (rate-ring's view), never zero.
    expect(round(v.y[1]!)).toEqual([100, 100, 100, 100, 100, 100]);
    // gw-c's newest bucket is its own (0.3 s), so its buckets are provisional from there back 2 s:
    // its live bins replace them rather than add to them.
    ring.add(0, 100, { 'gw-c/a': [20] });
    expect(round(ring.view(0).y[2]!)[0]).toBe(200);
  });

  it('leaves out empty buckets and says when there were no counts at all', () => {
    const ring = new RateRing(['a']);
    expect(backfillRates(ring, { t0: 0, step: 100, channels: { a: [null, null] } })).toBe(false);
    expect(backfillRates(ring, { t0: 0, step: 100, channels: {} })).toBe(false);
    expect(ring.view(0).x).toHaveLength(0);
  });
});
