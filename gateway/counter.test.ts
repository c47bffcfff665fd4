import { describe, expect, it } from 'vitest';
import { BinAccumulator, MAX_BATCH_BINS } from './counter.ts';
import type { Bins } from './counter.ts';

describe('BinAccumulator', () => {
  it('cuts batches at the span, at gaps and when the columns change', () => {
    const out: Bins[] = [];
    const acc = new BinAccumulator((b) => out.push(b), 30);
    for (const t of [0, 10, 20, 30, 40]) acc.push(t, 10, ['a'], [t]);
    acc.push(70, 10, ['a'], [7]);
    acc.push(80, 10, ['a', 'b'], [8, 8], 1.5);
    acc.flush();
    expect(out).toEqual([
      { t0: 0, dt: 10, ch: { a: [0, 10, 20] } },
      { t0: 30, dt: 10, ch: { a: [30, 40] } },
      { t0: 70, dt: 10, ch: { a: [7] } },
      { t0: 80, dt: 10, ch: { a: [8], b: [8] }, x: [1.5] },
    ]);
  });

  it('keeps a channel named "__proto__" as a channel', () => {
    const out: Bins[] = [];
    const acc = new BinAccumulator((b) => out.push(b), 60_000);
    acc.push(0, 10, ['__proto__', 'constructor'], [1, 2]);
    acc.flush();
    expect(Object.entries(out[0]!.ch)).toEqual([
      ['__proto__', [1]],
      ['constructor', [2]],
    ]);
    expect(JSON.stringify(out[0]!.ch)).toBe('{"__proto__":[1],"constructor":[2]}');
  });

  it('never puts more than MAX_BATCH_BINS bins in a batch', () => {
    const out: Bins[] = [];
    const acc = new BinAccumulator((b) => out.push(b), 60_000);
    for (let i = 0; i < MAX_BATCH_BINS + 5; i++) acc.push(i, 1, ['a'], [1]);
    acc.flush();
    expect(out.map((b) => b.ch['a']!.length)).toEqual([MAX_BATCH_BINS, 5]);
  });
});
