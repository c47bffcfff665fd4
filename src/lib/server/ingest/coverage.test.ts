// What of a batch is stored, given the spans of its gateway already stored: the exactly-once rule
// of the contract ("each bin of each channel is stored at most once") on small cases.
import { describe, expect, it } from 'vitest';
import { batchSpan, planBatch } from './coverage.ts';

const batch = (t0: number, n: number, ch: Record<string, number> = { a: 1, b: 2 }) => ({
  v: 1 as const,
  boot: 'b',
  seq: 0,
  t0,
  dt: 10,
  ch: Object.fromEntries(Object.entries(ch).map(([k, v]) => [k, Array.from({ length: n }, (_, i) => v * 100 + i)])),
});

describe('batchSpan', () => {
  it('gives the channel keys sorted whatever order the gateway sent them in', () => {
    expect(batchSpan(batch(0, 3, { b: 1, c: 2, a: 3 })).keys).toEqual(['a', 'b', 'c']);
    expect(batchSpan(batch(0, 3, { a: 1, b: 2 }))).toEqual({ t0: 0, t1: 30, n: 3, keys: ['a', 'b'] });
  });
});

describe('planBatch', () => {
  it('stores a batch that touches nothing whole, and refuses one already stored as a duplicate', () => {
    expect(planBatch(batch(0, 4), [])).toMatchObject({ kind: 'store', slices: [{ t0: 0, n: 4, keys: ['a', 'b'] }] });
    expect(planBatch(batch(0, 4), [{ t0: 0, t1: 40, dt: 10, keys: ['a', 'b'] }])).toEqual({ kind: 'duplicate' });
  });

  it('stores only the bins outside the stored spans, each channel sliced alike', () => {
    const plan = planBatch(batch(0, 6), [{ t0: 20, t1: 40, dt: 10, keys: ['a', 'b'] }]);
    expect(plan.kind).toBe('store');
    if (plan.kind !== 'store') return;
    expect(plan.slices.map((s) => [s.t0, s.n, s.channels])).toEqual([
      [0, 2, [[100, 101], [200, 201]]],
      [40, 2, [[104, 105], [204, 205]]],
    ]);
  });

  it('refuses a batch overlapping stored bins on another grid or with other channels', () => {
    expect(planBatch(batch(0, 4), [{ t0: 15, t1: 25, dt: 5, keys: ['a', 'b'] }])).toMatchObject({ kind: 'rejected', reason: expect.stringMatching(/different bin grid/) });
    expect(planBatch(batch(0, 4), [{ t0: 10, t1: 20, dt: 10, keys: ['a'] }])).toMatchObject({ kind: 'rejected', reason: expect.stringMatching(/different channels/) });
  });
});
