import { describe, expect, it } from 'vitest';
import { channelRates, wholeBuckets } from './history-range.ts';

// Rate = counts in a bucket / the time recorded in it (common practice for binned counting: counts over live time).
describe('history buckets', () => {
  it('widens a range to whole buckets of the step', () => {
    expect(wholeBuckets(61_500, 179_000, 60_000)).toEqual({ from: 60_000, to: 180_000 });
    expect(wholeBuckets(60_000, 180_000, 60_000)).toEqual({ from: 60_000, to: 180_000 });
  });

  it('turns sums into counts/s and leaves out empty buckets and one still filling', () => {
    // 3 buckets of 1 s from t = 10 s, fully recorded; the answer came at 12.5 s, inside the third.
    const answer = { t0: 10_000, step: 1_000, channels: { 'gw/a': [100, null, 40] }, coveredMs: { gw: [1_000, 0, 1_000] } };
    expect(channelRates(answer, 'gw/a', 12_500)).toEqual([100, null, null]);
    expect(channelRates(answer, 'gw/a', 13_000)).toEqual([100, null, 40]);
  });

  it('divides each sum by the time its gateway recorded in the bucket, not by the step', () => {
    // 5 s buckets at 1,000 counts/s; a restart left 1.5 s of the second and the first is a
    // recording's start (its last 0.5 s). Channels of two gateways cover the buckets differently.
    const answer = {
      t0: 0,
      step: 5_000,
      channels: { 'gw-1/a': [500, 1_500, 5_000], 'gw-2/a': [2_500, 2_500, null] },
      coveredMs: { 'gw-1': [500, 1_500, 5_000], 'gw-2': [5_000, 5_000, 0] },
    };
    expect(channelRates(answer, 'gw-1/a', 20_000)).toEqual([1_000, 1_000, 1_000]);
    expect(channelRates(answer, 'gw-2/a', 20_000)).toEqual([500, 500, null]);
  });

  it('gives no rate where nothing is known to be covered or the channel is not in the answer', () => {
    const answer = { t0: 0, step: 1_000, channels: { 'gw/a': [7], 'other/a': [7] }, coveredMs: { gw: [0] } };
    expect(channelRates(answer, 'gw/a', 5_000)).toEqual([null]);
    expect(channelRates(answer, 'other/a', 5_000)).toEqual([null]);
    expect(channelRates(answer, 'gw/b', 5_000)).toEqual([]);
  });
});
