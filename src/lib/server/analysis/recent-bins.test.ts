// What the live figures' memory of recent bins keeps: the last seconds per gateway, and no more
// than a bounded number of values whatever the flood.
import { describe, expect, it } from 'vitest';
import { RecentBins } from './recent-bins.ts';

const T0 = 1_796_000_000_000;

describe('RecentBins', () => {
  it('gives each channel, the positions and the coincidences back in time order', () => {
    const r = new RecentBins();
    // Added out of order: a replayed batch first.
    r.add('g', { v: 1, boot: 'b', seq: 1, t0: T0 + 10, dt: 5, ch: { a: [3, 4], b: [30, 40] }, x: [0.1, 0.2], cc: [1, 0] }, T0);
    r.add('g', { v: 1, boot: 'b', seq: 0, t0: T0, dt: 5, ch: { a: [1, 2], b: [10, 20] }, x: [0, 0.05], cc: [0, 1] }, T0);
    expect([...r.series('g', 'b', 1_000)!.counts]).toEqual([10, 20, 30, 40]);
    expect([...r.scan('g', 1_000)!.counts]).toEqual([0, 0.05, 0.1, 0.2]);
    expect([...r.coincidences('g', 1_000)!.counts]).toEqual([0, 1, 1, 0]);
    expect(r.series('g', 'c', 1_000)).toBeNull();
    expect(r.series('g', 'a', 1_000)!.gapsBefore).toEqual([]);
    // A batch lost in transit: the bins after it follow a gap.
    r.add('g', { v: 1, boot: 'b', seq: 3, t0: T0 + 30, dt: 5, ch: { a: [7, 8], b: [70, 80] } }, T0);
    expect(r.series('g', 'a', 1_000)!.gapsBefore).toEqual([4]);
    expect(r.series('other', 'a', 1_000)).toBeNull();
  });

  it('holds at most 4 M values, dropping the oldest, however many batches a second arrive', () => {
    const r = new RecentBins();
    const ch = { a: new Array<number>(100).fill(1), b: new Array<number>(100).fill(1), c: new Array<number>(100).fill(1), d: new Array<number>(100).fill(1) };
    // 120 gateways × 100 batches of 100 ms: 10 s, all inside the 12 s kept, but 4.8 M values.
    for (let i = 0; i < 12_000; i++) r.add(`g${i % 120}`, { v: 1, boot: 'b', seq: i, t0: T0 + Math.floor(i / 120) * 100, dt: 1, ch }, T0);
    let kept = 0;
    for (let g = 0; g < 120; g++) kept += r.series(`g${g}`, 'a', 12_000)!.counts.length;
    expect(kept).toBe(1_000_000);
    // The oldest went: 2,000 batches in arrival order, the first 17 of g0.
    expect(r.series('g0', 'a', 12_000)!.counts.length).toBe(8_300);
  });
});

describe('RecentBins.preload', () => {
  const batch = (t0: number, a: number[]) => ({ v: 1 as const, boot: 'b', seq: 0, t0, dt: 5, ch: { a } });

  it('holds each bin once when stored batches are read back while the same ones arrive live', () => {
    const r = new RecentBins();
    // Arrived live while the stored window was read: it is among the stored rows too.
    r.add('g', batch(T0 + 20, [5, 6]), T0);
    // A stored row may hold several batches merged into one span.
    r.preload('g', [batch(T0, [1, 2, 3, 4]), batch(T0 + 20, [5, 6])], T0);
    expect([...r.series('g', 'a', 1_000)!.counts]).toEqual([1, 2, 3, 4, 5, 6]);
    // Stored before the read, announced after it: already held.
    r.add('g', batch(T0 + 10, [3, 4]), T0);
    // Past what was read back: held, and the gateway's later batches go in unchecked.
    r.add('g', batch(T0 + 30, [7, 8]), T0);
    r.add('g', batch(T0 + 40, [9, 10]), T0);
    expect([...r.series('g', 'a', 1_000)!.counts]).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
    expect(r.series('g', 'a', 1_000)!.gapsBefore).toEqual([]);
  });

  it('puts the read-back batches before the live ones, so the oldest still age out first', () => {
    const r = new RecentBins(1_000);
    r.add('g', batch(T0 + 500, [1]), T0);
    r.preload('h', [batch(T0, [2])], T0);
    r.add('g', batch(T0 + 1_003, [3]), T0);
    expect(r.series('h', 'a', 10_000)).toBeNull();
    expect([...r.series('g', 'a', 10_000)!.counts]).toEqual([1, 3]);
  });
});
