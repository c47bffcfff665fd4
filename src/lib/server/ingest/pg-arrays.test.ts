// Sparse rollup blocks give the same literal text as the dense arrays they stand for, written the
// plain way (our own bookkeeping: the reference is the code path they replaced). That text reads
// back in PostgreSQL in tests/integration/pg-arrays-sql.test.ts.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { blocksLiteral, numericArrayLiteral, textArrayLiteral, type SparseBlock } from './pg-arrays.ts';

const dense = (b: SparseBlock, length: number) => {
  const out = new Array<number>(length).fill(0);
  b.slots.forEach((s, j) => (out[s] = b.values[j]!));
  return out;
};

/** Blocks of `length` slots: some slots, ascending and unique, each with a non-negative integer. */
const blocks = (length: number) =>
  fc.array(
    fc.uniqueArray(fc.integer({ min: 0, max: length - 1 }), { maxLength: length }).chain((slots) => {
      const sorted = [...slots].sort((a, b) => a - b);
      return fc.array(fc.nat(), { minLength: sorted.length, maxLength: sorted.length }).map((values) => ({ slots: sorted, values }));
    }),
    { maxLength: 5 },
  );

describe('blocksLiteral', () => {
  it('writes what the dense arrays would, for any slots (first, last, adjacent, none)', () => {
    for (const length of [1, 2, 60]) {
      fc.assert(
        fc.property(blocks(length), (bs) => {
          expect(blocksLiteral(bs, length)).toBe(textArrayLiteral(bs.map((b) => numericArrayLiteral(dense(b, length)))));
        }),
        { numRuns: 300 },
      );
    }
  });

  it('writes one touched second of a minute', () => {
    const literal = blocksLiteral([{ slots: [2], values: [1234] }], 4);
    expect(literal).toBe('{"{0,0,1234,0}"}');
    expect(blocksLiteral([], 60)).toBe('{}');
  });
});
