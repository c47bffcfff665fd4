// The drive state read off the positions in the counts: holding, moving (with its way) or unknown.
// Our own rule (common practice: a drive at one position for the whole window is holding).
import { describe, expect, it } from 'vitest';
import { DriveTracker } from './drive-state.ts';

describe('DriveTracker', () => {
  it('says holding at one position, moving with its way while positions change, unknown when they stop coming', () => {
    const d = new DriveTracker();
    expect(d.state(0)).toEqual({ kind: 'unknown' });
    d.add(10_000, 10, Array(100).fill(40.5));
    expect(d.state(11_000)).toEqual({ kind: 'holding', x: 40.5, at: 10_990 });
    d.add(11_000, 10, Array.from({ length: 100 }, (_, i) => 40.5 - i * 0.05));
    expect(d.state(12_000)).toMatchObject({ kind: 'moving', way: 'down', hi: 40.5 });
    expect((d.state(12_000) as { x: number }).x).toBeCloseTo(35.55, 9);
    expect(d.state(12_000 + 6_000)).toEqual({ kind: 'unknown' });
  });

  it('forgets positions older than the window, and ignores late bins', () => {
    const d = new DriveTracker();
    d.add(0, 10, Array.from({ length: 100 }, (_, i) => i * 0.1));
    d.add(5_000, 10, Array(100).fill(9));
    expect(d.state(6_000)).toMatchObject({ kind: 'holding', x: 9 });
    d.add(1_000, 10, Array(100).fill(3));
    expect(d.state(6_000)).toMatchObject({ kind: 'holding', x: 9 });
  });
});
