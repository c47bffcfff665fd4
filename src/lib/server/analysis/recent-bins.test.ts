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
