import { describe, expect, it } from 'vitest';
import type { CountsMessage, LiveMessage } from '../../live-messages.ts';
import { coalesceCounts, countsAfter } from './coalesce.ts';

const counts = (gateway: string, t0: number, n: number): CountsMessage => ({
  type: 'counts',
  bench: 'b',
  gateway,
  t0,
  dt: 10,
  ch: { a: Array.from({ length: n }, (_, i) => t0 + i) },
});
const run = (ms: LiveMessage[]) => coalesceCounts(ms, (m) => m, (_a, _b, merged) => merged);

describe('coalesceCounts', () => {
  it('merges contiguous batches of a gateway across other gateways, keeping each gateway in order', () => {
    const out = run([counts('g1', 0, 2), counts('g2', 0, 2), counts('g1', 20, 2), counts('g2', 20, 1)]);
    expect(out).toEqual([
      { ...counts('g1', 0, 2), ch: { a: [0, 1, 20, 21] } },
      { ...counts('g2', 0, 2), ch: { a: [0, 1, 20] } },
    ]);
  });

  it('never merges across a gap or across a message of another type', () => {
    const status: LiveMessage = { type: 'status', bench: 'b', gateway: 'g1', state: 'online', at: 0 };
    expect(run([counts('g1', 0, 2), counts('g1', 30, 2)])).toHaveLength(2);
    expect(run([counts('g1', 0, 2), status, counts('g1', 20, 2)])).toHaveLength(3);
  });
});

describe('countsAfter', () => {
  it('keeps, trims or drops a message by where its bins start', () => {
    const m = { ...counts('g1', 100, 4), x: [1, 2, 3, 4], cc: [5, 6, 7, 8] };
    expect(countsAfter(m, 100)).toBe(m);
    expect(countsAfter(m, 140)).toBeNull();
    // A cut inside a bin keeps that bin out: it started before `from`, so the replay had it.
    expect(countsAfter(m, 115)).toEqual({ ...m, t0: 120, ch: { a: [102, 103] }, x: [3, 4], cc: [7, 8] });
  });
});
