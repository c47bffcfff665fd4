import { describe, expect, it } from 'vitest';
import { RateRing } from './rate-ring.ts';

const rates = (ring: RateRing, from = 0) => {
  const v = ring.view(from);
  return { x: [...v.x], a: [...v.y[0]!].map((r) => Math.round(r * 1e6) / 1e6) };
};

// Rate = counts / time covered, per bucket (common practice for binned counting).
describe('RateRing', () => {
  it('sums 1 ms bins into 100 ms buckets as counts/s', () => {
    const ring = new RateRing(['a']);
    ring.add(0, 1, { a: Array.from({ length: 200 }, () => 2) });
    expect(rates(ring)).toEqual({ x: [0, 0.1], a: [2000, 2000] });
  });

  it('shares a bin that straddles buckets by the time it spends in each', () => {
    const ring = new RateRing(['a']);
    // 40 ms bins of 4 counts (100 /s): [80, 120) is half in each bucket.
    ring.add(0, 40, { a: [4, 4, 4, 4, 4] });
    expect(rates(ring)).toEqual({ x: [0, 0.1], a: [100, 100] });
  });

  it('keeps earlier buckets when wider bins arrive, and a wide backfill fills only empty buckets', () => {
    const ring = new RateRing(['a']);
    ring.add(1_000, 1, { a: Array.from({ length: 100 }, () => 1) }); // 1000 /s in [1.0, 1.1) s
    ring.add(2_000, 1_000, { a: [500] }); // one 1 s bin: 500 /s over [2, 3) s
    ring.add(1_000, 1_000, { a: [300] }, true); // backfill of [1, 2) s: fills all but the live bucket
    const r = rates(ring);
    expect(r.x).toHaveLength(20);
    expect(r.a[0]).toBe(1000);
    expect(r.a.slice(1, 10)).toEqual(Array(9).fill(300));
    expect(r.a.slice(10)).toEqual(Array(10).fill(500));
  });

  it('lets live bins replace a backfill bucket read while it was still filling, instead of showing a dip', () => {
    const ring = new RateRing(['a']);
    // Read at page open: [1.0, 1.1) s complete (100 counts), [1.1, 1.2) s only half there (50 of 100).
    ring.add(1_000, 100, { a: [100] }, true, false);
    ring.add(1_100, 100, { a: [50] }, true, true);
    expect(rates(ring).a).toEqual([1000, 500]);
    // The live bins of the second half of that bucket arrive: the bucket is now what live says.
    ring.add(1_150, 10, { a: [10, 10, 10, 10, 10] });
    expect(rates(ring).a).toEqual([1000, 1000]);
    ring.add(1_100, 10, { a: [10, 10, 10, 10, 10] });
    expect(rates(ring).a).toEqual([1000, 1000]);
  });
});

// Each channel's rate over the time its own bins cover (common practice, as above).
describe('RateRing with channels from several gateways', () => {
  it('gives each channel its own rate when two gateways fill the same bucket, and holds a slower one', () => {
    const ring = new RateRing(['g1/a', 'g2/h']);
    // g1 sends 10 ms bins of 10 counts (1000 /s); g2 one 100 ms bin of 50 counts (500 /s), same bucket.
    ring.add(1_000, 10, { 'g1/a': Array(10).fill(10) });
    ring.add(1_000, 100, { 'g2/h': [50] });
    // The next bucket has g1's bins only: g2's batch for it has not come yet.
    ring.add(1_100, 10, { 'g1/a': Array(10).fill(20) });
    const v = ring.view(0);
    expect([...v.x]).toEqual([1, 1.1]);
    expect([...v.y[0]!]).toEqual([1000, 2000]);
    expect([...v.y[1]!]).toEqual([500, 500]);
  });
});

describe('RateRing and the clock', () => {
  it('does not draw bins from far in the future, which would push every true bin out', () => {
    const ring = new RateRing(['a']);
    const now = Date.now();
    ring.add(now + 3_600_000, 1_000, { a: [5] });
    ring.add(now - 1_000, 1, { a: [1] });
    expect(ring.newestMs()).toBe(Math.floor((now - 1_000) / 100) * 100);
  });
});
