import { describe, expect, it } from 'vitest';
import type { CountsMessage, LiveMessage } from '../../live-messages.ts';
import { coalesceCounts, countsOutside } from './coalesce.ts';
import { joinSpans } from '../../spans.ts';

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

  it('treats channel keys named like Object.prototype properties as plain keys', () => {
    // JSON.parse makes "__proto__" an own key, as a gateway's batch arrives.
    const withKeys = (t0: number, keys: string[]): CountsMessage => ({ ...counts('g1', t0, 2), ch: JSON.parse(`{${keys.map((k, i) => `"${k}":[${t0 + i},${t0 + i}]`).join(',')}}`) as Record<string, number[]> });
    // Same number of channels, other names: "constructor" is found on Object.prototype by `in`.
    expect(run([withKeys(0, ['constructor', 'x1']), withKeys(20, ['x1', 'y'])])).toHaveLength(2);
    const merged = run([withKeys(0, ['__proto__', 'constructor']), withKeys(20, ['__proto__', 'constructor'])]);
    expect(merged).toHaveLength(1);
    expect(Object.entries(merged[0]!.type === 'counts' ? merged[0]!.ch : {})).toEqual([
      ['__proto__', [0, 0, 20, 20]],
      ['constructor', [1, 1, 21, 21]],
    ]);
    expect(Object.entries(countsOutside(withKeys(0, ['__proto__']), [[0, 10]])[0]!.ch)).toEqual([['__proto__', [0]]]);
  });
});

describe('countsOutside', () => {
  it('keeps a message clear of the spans, drops one inside them, and cuts one across them', () => {
    const m = { ...counts('g1', 100, 6), x: [1, 2, 3, 4, 5, 6], cc: [7, 8, 9, 10, 11, 12] };
    expect(countsOutside(m, [])).toEqual([m]);
    expect(countsOutside(m, [[0, 100], [160, 200]])[0]).toBe(m);
    expect(countsOutside(m, [[50, 200]])).toEqual([]);
    // Bins at 100…150 (10 ms each); 120 and 130 were taken: two runs are left.
    expect(countsOutside(m, [[0, 50], [120, 140]])).toEqual([
      { ...m, t0: 100, ch: { a: [100, 101] }, x: [1, 2], cc: [7, 8] },
      { ...m, t0: 140, ch: { a: [104, 105] }, x: [5, 6], cc: [11, 12] },
    ]);
  });
});

describe('joinSpans', () => {
  it('sorts spans and joins the ones that overlap or touch', () => {
    expect(joinSpans([[1000, 5000], [500, 6000], [6000, 7000], [8000, 9000]])).toEqual([[500, 7000], [8000, 9000]]);
    // Joined, a bin inside the wider span counts as sent (apart, the search stepped past it).
    const m = counts('g1', 5500, 1);
    expect(countsOutside(m, joinSpans([[500, 6000], [1000, 5000]]))).toEqual([]);
  });
});
