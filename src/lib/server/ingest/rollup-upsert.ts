// The statement fragment that adds rollup deltas to the stored sums, shared by the write statement
// (imports and the demo past roll up in the write itself) and the rollup journal (live ingest rolls
// up in a statement of its own). Sums are added with array arithmetic; every delta travels as a
// dense block of BLOCK_LEN in six array parameters. Pure.
import { blocksLiteral, numericArrayLiteral, textArrayLiteral } from './pg-arrays.ts';
import { BLOCK_LEN, type RollupDelta } from './rollup-math.ts';

/** A CTE body (no name) reading its six parameters from `$first` on. Deltas must be unique per key: one row may change once per statement. */
export function rollupUpsertSql(first: number): string {
  const p = (i: number) => `$${first + i}`;
  return `insert into rollups as r (gateway_id, key, step_ms, block_t0, sums, bins)
  select u.gw, u.key, u.step, u.block_t0, u.sums::int8[], u.bins::int4[]
    from unnest(${p(0)}::text[], ${p(1)}::text[], ${p(2)}::int4[], ${p(3)}::int8[], ${p(4)}::text[], ${p(5)}::text[]) as u(gw, key, step, block_t0, sums, bins)
  on conflict (gateway_id, key, step_ms, block_t0) do update set
    sums = (select array_agg(a + b order by i) from unnest(r.sums, excluded.sums) with ordinality as t(a, b, i)),
    bins = (select array_agg(a + b order by i) from unnest(r.bins, excluded.bins) with ordinality as t(a, b, i))`;
}

/** The six parameters of `rollupUpsertSql`, in order. */
export function rollupUpsertValues(deltas: readonly RollupDelta[]): unknown[] {
  return [
    textArrayLiteral(deltas.map((d) => d.gatewayId)),
    textArrayLiteral(deltas.map((d) => d.key)),
    numericArrayLiteral(deltas.map((d) => d.stepMs)),
    numericArrayLiteral(deltas.map((d) => d.blockT0)),
    blocksLiteral(deltas.map((d) => ({ slots: d.slots, values: d.sums })), BLOCK_LEN),
    blocksLiteral(deltas.map((d) => ({ slots: d.slots, values: d.bins })), BLOCK_LEN),
  ];
}
