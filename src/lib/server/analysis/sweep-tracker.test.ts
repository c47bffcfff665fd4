import { describe, expect, it } from 'vitest';
import { SweepTracker } from './sweep-tracker.ts';

// A triangle drive: up from 0 to 10 V and back, 0.5 V steps held 4 bins each, 1 ms bins.
function triangle(): number[] {
  const xs: number[] = [];
  for (let v = 0; v <= 10; v += 0.5) for (let k = 0; k < 4; k++) xs.push(v);
  for (let v = 9.5; v >= 0; v -= 0.5) for (let k = 0; k < 4; k++) xs.push(v);
  return xs;
}

function feed(tracker: SweepTracker, xs: number[], t0: number, batch: number) {
  const out = [];
  for (let i = 0; i < xs.length; i += batch) {
    const x = xs.slice(i, i + batch);
    const ones = x.map(() => 1);
    out.push(...tracker.push(t0 + i, 1, x, ones, ones));
  }
  return out;
}

describe('SweepTracker', () => {
  it('hands back the up pass when the drive reverses, grouping dwell bins', () => {
    const t = new SweepTracker({ restMs: 50 });
    const passes = feed(t, triangle(), 1_000, 10);
    expect(passes.length).toBeGreaterThanOrEqual(1);
    const up = passes[0]!;
    expect(up.direction).toBe('up');
    expect(up.startMs).toBe(1_000);
    expect(up.x[0]).toBe(0);
    expect(up.x[up.x.length - 1]).toBe(10);
    // 21 steps of 4 bins each, summed per step; the pass ends where the drive first reached the top.
    expect(up.x.length).toBe(21);
    expect(Array.from(up.binsPerPoint.subarray(0, 20)).every((n) => n === 4)).toBe(true);
  });

  it('ends the pass in progress when the drive comes to rest', () => {
    const t = new SweepTracker({ restMs: 50 });
    const xs = triangle();
    const rest = new Array<number>(100).fill(0);
    const passes = feed(t, [...xs, ...rest], 0, 10);
    expect(passes.map((p) => p.direction)).toEqual(['up', 'down']);
    // The pass ends where the drive stopped moving: the resting bins are not part of it.
    expect(passes[1]!.x[passes[1]!.x.length - 1]).toBe(0.5);
  });

  it('does not fold a long rest before the sweep into its first pass', () => {
    const t = new SweepTracker({ restMs: 50 });
    const passes = feed(t, [...new Array<number>(5_000).fill(0), ...triangle()], 0, 10);
    // The rest is cut to one step's dwell (4 bins) before the drive moved.
    expect(passes[0]!.startMs).toBe(5_000 - 0);
    expect(passes[0]!.binsPerPoint[0]).toBe(4);
  });

  it('hands back the pass under way when the record ends', () => {
    const t = new SweepTracker({ restMs: 50 });
    const up = triangle().slice(0, 84);
    expect(feed(t, up, 0, 10)).toEqual([]);
    const [last] = t.flush();
    expect(last?.direction).toBe('up');
    expect(t.flush()).toEqual([]);
  });

  it('restarts on a gap instead of fitting across it', () => {
    const t = new SweepTracker({ restMs: 50 });
    const xs = triangle();
    const half = xs.slice(0, 60);
    feed(t, half, 0, 10);
    // Resumes 5 s later: the earlier partial pass is dropped.
    const passes = feed(t, xs, 5_000, 10);
    expect(passes[0]!.startMs).toBe(5_000);
  });

  it('ignores a batch behind what it has seen, and the pass under way goes on', () => {
    const inOrder = feed(new SweepTracker({ restMs: 50 }), triangle(), 1_000, 10);
    const t = new SweepTracker({ restMs: 50 });
    const xs = triangle();
    const passes = feed(t, xs.slice(0, 40), 1_000, 10);
    expect(t.seenUntil).toBe(1_040);
    // A batch from before the track (a late one) in the middle of the up pass.
    expect(t.push(500, 1, [3, 3], [1, 1], [1, 1])).toEqual([]);
    expect(t.seenUntil).toBe(1_040);
    for (let i = 40; i < xs.length; i += 10) {
      const x = xs.slice(i, i + 10);
      passes.push(...t.push(1_000 + i, 1, x, x.map(() => 1), x.map(() => 1)));
    }
    expect(passes).toEqual(inOrder);
  });
});
