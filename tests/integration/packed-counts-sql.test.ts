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

it('refuses what it cannot read or write faithfully instead of shifting counts', async () => {
  const q = (sql: string, v: unknown[]) => getDbHandle().pool.query(sql, v);
  await expect(q('select pack_counts($1::int4[])', [[1, null, 3]])).rejects.toThrow(/NULL/);
  await expect(q('select unpack_counts($1::bytea)', [Buffer.from([3, 1, 2, 3])])).rejects.toThrow(/malformed/);
  await expect(q('select unpack_counts($1::bytea)', [Buffer.from([2, 1, 2, 3])])).rejects.toThrow(/malformed/);
});

it('converts int4[] columns in place the way migration 0004 does, nulls staying null', async () => {
  const client = await getDbHandle().pool.connect();
  try {
    await client.query('create temp table old_rows (id int, counts int4[] not null, cc int4[])');
    await client.query(`insert into old_rows values (1, '{412,398,405,9,14,11}', null), (2, '{7,2147483647}', '{1,0}')`);
    await client.query(`alter table old_rows
      alter column counts set data type bytea using pack_counts(counts),
      alter column cc set data type bytea using pack_counts(cc)`);
    const { rows } = await client.query<{ counts: Buffer; cc: Buffer | null }>('select counts, cc from old_rows order by id');
    expect(rows.map((r) => [unpackCounts(r.counts), r.cc && unpackCounts(r.cc)])).toEqual([
      [[412, 398, 405, 9, 14, 11], null],
      [[7, 2147483647], [1, 0]],
    ]);
  } finally {
    client.release();
  }
});
