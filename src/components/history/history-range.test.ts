import { describe, expect, it } from 'vitest';
import { bucketRates, pickStep, wholeBuckets } from './history-range.ts';

// Rate = counts in a bucket / the bucket's time, over whole buckets only (common practice for binned counting).
describe('history buckets', () => {
  it('widens a range to whole buckets of the step', () => {
    expect(wholeBuckets(61_500, 179_000, 60_000)).toEqual({ from: 60_000, to: 180_000 });
    expect(wholeBuckets(60_000, 180_000, 60_000)).toEqual({ from: 60_000, to: 180_000 });
  });

  it('turns sums into counts/s and leaves out empty buckets and one still filling', () => {
    // 3 buckets of 1 s from t = 10 s; the answer came at 12.5 s, inside the third.
    expect(bucketRates([100, null, 40], 10_000, 1_000, 12_500)).toEqual([100, null, null]);
    expect(bucketRates([100, 50, 40], 10_000, 1_000, 13_000)).toEqual([100, 50, 40]);
  });

  it('keeps at most about one point per pixel', () => {
    expect(pickStep(3_600_000, 1_200)).toBe(5_000);
  });
});
