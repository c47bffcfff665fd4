// The ingest's hand-built array literals read back in PostgreSQL as the arrays they stand for,
// awkward strings included (PostgreSQL manual 8.15.6, "Array Value Input": quoting and backslash
// escapes; an unquoted NULL is a null element).
import { expect, it } from 'vitest';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { blocksLiteral, keyArrayLiteral, numericArrayLiteral, textArrayLiteral } from '../../src/lib/server/ingest/pg-arrays.ts';

const q = async <T>(sql: string, v: unknown[]) => (await getDbHandle().pool.query<{ v: T }>(sql, v)).rows[0]!.v;

it('text literals keep quotes, backslashes, braces, commas, spaces, "NULL" and empty strings, and nulls', async () => {
  const values = ['plain', 'a"b', 'c\\d', '\\"', 'NULL', 'null', '', '{x,y}', ' lead and trail ', 'ünï ✓', null];
  expect(await q<(string | null)[]>('select $1::text[] as v', [textArrayLiteral(values)])).toEqual(values);
  // An array of array literals, as the write sends keys and per-row value lists.
  const nested = [keyArrayLiteral(['a', 'null']), numericArrayLiteral([1.5, -2, 3e-7]), null];
  expect(await q<(string | null)[]>('select $1::text[] as v', [textArrayLiteral(nested)])).toEqual(nested);
  expect(await q<string[]>('select ($1::text[])[1]::text[] as v', [textArrayLiteral(nested)])).toEqual(['a', 'null']);
});

it('numeric literals read as int8 and float8 arrays', async () => {
  // The server's pool reads int8 as a JS number (its type parser).
  expect(await q<number[]>('select $1::int8[] as v', [numericArrayLiteral([0, 8.64e15, 2 ** 31 - 1])])).toEqual([0, 8.64e15, 2 ** 31 - 1]);
  expect(await q<number[]>('select $1::float8[] as v', [numericArrayLiteral([1.5, -2, 3e-7])])).toEqual([1.5, -2, 3e-7]);
  expect(await q<number[]>('select $1::int4[] as v', [numericArrayLiteral([])])).toEqual([]);
});

it('sparse rollup blocks read as the dense int8 blocks they stand for', async () => {
  const literal = blocksLiteral([{ slots: [0, 59], values: [7, 8.64e15] }, { slots: [], values: [] }, { slots: [30], values: [5] }], 60);
  const rows = await q<string[]>('select $1::text[] as v', [literal]);
  const block = (at: Record<number, number>) => Array.from({ length: 60 }, (_, i) => at[i] ?? 0);
  const read = await Promise.all(rows.map((r) => q<number[]>('select $1::int8[] as v', [r])));
  expect(read).toEqual([block({ 0: 7, 59: 8.64e15 }), block({}), block({ 30: 5 })]);
});
