// The SQL side of the packed count format (migration 0004) agrees with the server's codec, so
// psql users and the in-place conversion of old int4[] rows read and write what the server does.
import { expect, it } from 'vitest';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { packCounts, unpackCounts } from '../../src/lib/server/db/packed-counts.ts';

const arrays = [[0, 1, 255], [256, 0, 65535], [65536, 7, 2 ** 31 - 1], [42]];

it('unpack_counts reads what the server packs, at every width', async () => {
  for (const a of arrays) {
    const { rows } = await getDbHandle().pool.query<{ v: number[] }>('select unpack_counts($1::bytea) as v', [packCounts(a)]);
    expect(rows[0]!.v).toEqual(a);
  }
});

it('pack_counts (the conversion of int4[] rows) writes what the server reads', async () => {
  for (const a of arrays) {
    const { rows } = await getDbHandle().pool.query<{ p: Buffer }>('select pack_counts($1::int4[]) as p', [a]);
    expect(unpackCounts(rows[0]!.p)).toEqual(a);
  }
});
