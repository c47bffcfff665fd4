// Binned counts of a bench for `GET /api/v1/benches/{id}/counts`, read from the coarsest store that
// serves the step exactly: 1 min rollups when the step is a multiple of a minute, 1 s rollups when
// it is a multiple of a second, raw rows otherwise. Buckets are aligned to multiples of the step
// since the epoch, so two queries with the same step always agree; a bin counts in the bucket
// holding its start, exact since a raw step must be a multiple of the bin width (the contract's
// rule, refused with 422 otherwise).
//
// Each answer also says how much of every bucket each gateway's stored bins cover (`coveredMs`):
// a sum alone cannot tell a bucket half recorded (a restart's gap, a recording's first and last
// bucket) from one where the light halved, and rates drawn as sum/step dipped towards zero there.
import { getDbHandle } from './db/index.ts';
import { unpackRow } from './db/packed-counts.ts';
import { rawRowsIn } from './db/raw-rows.ts';
import { benchChannels, channelsOfBenches, type BenchChannel } from './benches.ts';
import { HttpError } from './http/responses.ts';
import { BLOCK_LEN, CC_KEY, rollupDeltas } from './ingest/rollup-math.ts';
import type { Slice } from './ingest/coverage.ts';
import { sliceOfRow } from './ingest/rollup-journal.ts';

/** Most buckets one answer may hold. */
export const MAX_POINTS = 100_000;
/** Longest span read from raw rows (ms): longer spans need a step that rollups serve. */
export const MAX_RAW_SPAN_MS = 6 * 3_600_000;

export type Resolution = 'raw' | '1s' | '1min';

export interface CountsResult {
  t0: number;
  step: number;
  resolution: Resolution;
  /** One column per channel, "<gateway>/<key>"; null where no bin was stored. */
  channels: Record<string, (number | null)[]>;
  /**
   * Per gateway of the bench: ms of each bucket covered by the bins summed into it (0 where none),
   * so a channel's rate is its sum over its gateway's covered time. A bin counts in the bucket
   * holding its start, so with bins longer than a rollup step the time can pass the step.
   */
  coveredMs: Record<string, number[]>;
  /**
   * Per gateway with bins in the range, the bin width (ms) its coverage was counted in: a rollup
   * slot holds the bins starting in it, so with a width that does not divide the step a whole
   * bucket's coverage is off the step by up to one bin (1002, 999, 999 ms for 3 ms bins in 1 s).
   */
  binMs: Record<string, number>;
  /** Mean scan coordinate per bucket (raw resolution only: rollups keep no x). */
  x?: (number | null)[];
  /** Summed coincidences per bucket. */
  cc?: (number | null)[];
  /** The bench's channels in column order, with labels and roles (for CSV metadata). */
  channelInfo: BenchChannel[];
}

export function resolutionFor(step: number): { resolution: Resolution; levelMs: number | null } {
  if (step % 60_000 === 0) return { resolution: '1min', levelMs: 60_000 };
  if (step % 1_000 === 0) return { resolution: '1s', levelMs: 1_000 };
  return { resolution: 'raw', levelMs: null };
}

class Buckets {
  readonly values = new Map<string, (number | null)[]>();
  constructor(
    readonly t0: number,
    readonly step: number,
    readonly points: number,
  ) {}
  index(t: number): number {
    const i = Math.floor((t - this.t0) / this.step);
    return i >= 0 && i < this.points ? i : -1;
  }
  column(name: string): (number | null)[] {
    let col = this.values.get(name);
    if (!col) {
      col = new Array<number | null>(this.points).fill(null);
      this.values.set(name, col);
    }
    return col;
  }
  add(name: string, i: number, v: number): void {
    const col = this.column(name);
    col[i] = (col[i] ?? 0) + v;
  }
}

/**
 * Bin width (ms) of each gateway's last raw row starting before `before`, else its first one after:
 * one primary-key probe each, where reading the widths of every row in a long range would scan it.
 * Rollups keep no width, so a gateway that changed its bin width inside or after the range has the
 * slots before the change scaled by the newer width (their rates off by the ratio of the widths);
 * raw resolution is exact whatever the widths. Gateways without raw rows are missing.
 */
async function binWidths(gatewayIds: string[], before: number): Promise<Map<string, number>> {
  if (!gatewayIds.length) return new Map();
  const { rows } = await getDbHandle().pool.query<{ gateway_id: string; dt: number }>(
    `select g.id as gateway_id, w.dt
       from unnest($1::text[]) as g(id)
       cross join lateral (
         (select dt from count_batches c where c.gateway_id = g.id and c.t0 < $2 order by c.t0 desc limit 1)
         union all
         (select dt from count_batches c where c.gateway_id = g.id and c.t0 >= $2 order by c.t0 limit 1)
         limit 1
       ) w`,
    [gatewayIds, before],
  );
  return new Map(rows.map((r) => [r.gateway_id, r.dt]));
}

/**
 * A gateway's bin width read from its rollup slots alone, past raw retention. A full slot holds
 * level/width bins (a range without one full slot reads the width too long, and the rates too
 * low). Bins as long as a slot or longer leave one bin in every k-th slot: the mean spacing of the
 * slots holding one (a gap inside the range lengthens it).
 */
function widthFromSlots(blocks: Map<number, number[]>, levelMs: number): number {
  let most = 0;
  let first = Infinity;
  let last = -Infinity;
  let filled = 0;
  for (const [blockT0, bins] of blocks) {
    bins.forEach((n, i) => {
      if (!n) return;
      most = Math.max(most, n);
      const t = blockT0 + i * levelMs;
      first = Math.min(first, t);
      last = Math.max(last, t);
      filled++;
    });
  }
  if (most > 1 || filled < 2) return levelMs / Math.max(most, 1);
  return Math.max(levelMs, (last - first) / (filled - 1));
}

/** The buckets a query asks for, checked against the bounds every counts answer keeps. */
interface Grid {
  t0: number;
  step: number;
  points: number;
  end: number;
  resolution: Resolution;
  levelMs: number | null;
}

function gridFor(from: number, to: number, step: number): Grid {
  if (!(to > from)) throw new HttpError(422, 'to must be after from');
  const t0 = Math.floor(from / step) * step;
  const points = Math.ceil((to - t0) / step);
  if (points > MAX_POINTS) throw new HttpError(422, `that asks for ${points} points; at most ${MAX_POINTS}: use a larger step or a shorter span`);
  const { resolution, levelMs } = resolutionFor(step);
  if (resolution === 'raw' && to - t0 > MAX_RAW_SPAN_MS) {
    throw new HttpError(422, `spans over ${MAX_RAW_SPAN_MS / 3_600_000} h need a step that is a multiple of 1000 ms`);
  }
  return { t0, step, points, end: t0 + points * step, resolution, levelMs };
}

/** One bench's part of an answer, before it is put together. */
interface BenchBuckets {
  b: Buckets;
  channelInfo: BenchChannel[];
  covered: Map<string, number[]>;
  binMs: Map<string, number>;
}

function bucketsOf(grid: Grid, channelInfo: BenchChannel[]): BenchBuckets {
  const b = new Buckets(grid.t0, grid.step, grid.points);
  for (const c of channelInfo) b.column(`${c.gateway}/${c.key}`);
  const covered = new Map([...new Set(channelInfo.map((c) => c.gateway))].map((g) => [g, new Array<number>(grid.points).fill(0)]));
  return { b, channelInfo, covered, binMs: new Map() };
}

/** A block of one level's sums as read: stored, or added up from raw rows still in the rollup journal. */
interface Block {
  gateway_id: string;
  key: string;
  block_t0: number;
  sums: number[];
  bins: number[];
}

/**
 * The rollup blocks at `levelMs` of these gateways over [from, to), read in ONE statement, so in
 * one snapshot: the stored blocks plus the raw rows still listed in the rollup journal, added up
 * here as the journal would add them (rollup-journal.ts). Between a batch's write and its rollup
 * statement the answer is the same as after.
 */
async function rollupBlocks(gatewayIds: string[], levelMs: number, from: number, to: number): Promise<Block[]> {
  const blockMs = levelMs * BLOCK_LEN;
  const blockFrom = Math.floor(from / blockMs) * blockMs;
  const { rows } = await getDbHandle().pool.query<Block & { t0: number | null; dt: number | null; n: number | null; keys: string[] | null; counts: Buffer | null; cc: Buffer | null }>(
    `select gateway_id, key, block_t0, sums, bins, null::int8 as t0, null::int4 as dt, null::int4 as n, null::text[] as keys, null::bytea as counts, null::bytea as cc
       from rollups
      where gateway_id = any($1::text[]) and step_ms = $2 and block_t0 >= $3 and block_t0 < $4
     union all
     select c.gateway_id, null, null, null, null, c.t0, c.dt, c.n, c.keys, c.counts, c.cc
       from unnest($1::text[]) as g(id)
       -- Stored spans of a gateway never overlap: a row reaching into the range starts no earlier
       -- than the last one starting at or before it, so older listed rows are not read.
       cross join lateral (select coalesce((select b.t0 from count_batches b where b.gateway_id = g.id and b.t0 <= $3 order by b.t0 desc limit 1), $3) as t0) first
       join rollup_pending p on p.gateway_id = g.id and p.t0 >= first.t0 and p.t0 < $4
       join count_batches c on c.gateway_id = p.gateway_id and c.t0 = p.t0
      where c.t1 > $3`,
    [gatewayIds, levelMs, blockFrom, to],
  );
  const blocks = new Map<string, Block>();
  const listed: { gatewayId: string; slice: Slice }[] = [];
  for (const r of rows) {
    if (r.counts === null) blocks.set(`${r.gateway_id}\n${r.key}\n${r.block_t0}`, { gateway_id: r.gateway_id, key: r.key, block_t0: r.block_t0, sums: r.sums, bins: r.bins });
    else listed.push({ gatewayId: r.gateway_id, slice: sliceOfRow(unpackRow({ t0: r.t0!, dt: r.dt!, n: r.n!, keys: r.keys!, counts: r.counts, cc: r.cc })) });
  }
  for (const d of rollupDeltas(listed)) {
    if (d.stepMs !== levelMs || d.blockT0 < blockFrom || d.blockT0 >= to) continue;
    const id = `${d.gatewayId}\n${d.key}\n${d.blockT0}`;
    let block = blocks.get(id);
    if (!block) blocks.set(id, (block = { gateway_id: d.gatewayId, key: d.key, block_t0: d.blockT0, sums: new Array<number>(BLOCK_LEN).fill(0), bins: new Array<number>(BLOCK_LEN).fill(0) }));
    d.slots.forEach((slot, j) => {
      block.sums[slot]! += d.sums[j]!;
      block.bins[slot]! += d.bins[j]!;
    });
  }
  return [...blocks.values()];
}

/**
 * Fills the benches' buckets from the rollups at `levelMs`, read in one query for all their
 * gateways (a gateway listed by several benches, its channels left behind by a move, fills each).
 */
async function fillFromRollups(grid: Grid, levelMs: number, parts: BenchBuckets[]): Promise<void> {
  const benchesOf = new Map<string, BenchBuckets[]>();
  for (const p of parts) for (const g of p.covered.keys()) benchesOf.set(g, [...(benchesOf.get(g) ?? []), p]);
  if (!benchesOf.size) return;
  const rows = await rollupBlocks([...benchesOf.keys()], levelMs, grid.t0, grid.end);
  const index = new Buckets(grid.t0, grid.step, grid.points);
  // Rollups count bins per key; a gateway's bins per slot are the most of any of its keys, since
  // every key of a stored row has all its bins (a key missing from some rows, such as a channel
  // added mid-recording, is diluted by the others' time in those slots).
  const slotBins = new Map<string, Map<number, number[]>>();
  for (const r of rows) {
    const name = r.key === CC_KEY ? null : `${r.gateway_id}/${r.key}`;
    const owners = benchesOf.get(r.gateway_id) ?? [];
    for (let i = 0; i < r.sums.length; i++) {
      if (!r.bins[i]) continue;
      const at = index.index(r.block_t0 + i * levelMs);
      if (at < 0) continue;
      for (const p of owners) p.b.add(name ?? '#cc', at, r.sums[i]!);
    }
    let blocks = slotBins.get(r.gateway_id);
    if (!blocks) slotBins.set(r.gateway_id, (blocks = new Map()));
    const most = blocks.get(r.block_t0);
    if (most) r.bins.forEach((n, i) => (most[i] = Math.max(most[i] ?? 0, n)));
    else blocks.set(r.block_t0, [...r.bins]);
  }
  const widths = await binWidths([...slotBins.keys()], grid.end);
  for (const [gateway, blocks] of slotBins) {
    const width = widths.get(gateway) ?? widthFromSlots(blocks, levelMs);
    const cov = new Array<number>(grid.points).fill(0);
    for (const [blockT0, bins] of blocks) {
      bins.forEach((n, i) => {
        const at = index.index(blockT0 + i * levelMs);
        if (n && at >= 0) cov[at]! += n * width;
      });
    }
    for (const p of benchesOf.get(gateway) ?? []) {
      p.binMs.set(gateway, width);
      p.covered.set(gateway, [...cov]);
    }
  }
}

function resultOf(grid: Grid, p: BenchBuckets, x?: (number | null)[]): CountsResult {
  const channels: Record<string, (number | null)[]> = {};
  for (const [name, col] of p.b.values) if (name !== '#cc') channels[name] = col;
  const result: CountsResult = {
    t0: grid.t0,
    step: grid.step,
    resolution: grid.resolution,
    channels,
    coveredMs: Object.fromEntries(p.covered),
    binMs: Object.fromEntries(p.binMs),
    channelInfo: p.channelInfo,
  };
  if (x) result.x = x;
  const cc = p.b.values.get('#cc');
  if (cc) result.cc = cc;
  return result;
}

/**
 * The counts of several benches at once from the rollups, one query for all their gateways
 * whatever their number: for the lab overview's sparklines. `step` must be a multiple of 1000 ms.
 */
export async function queryRollupCountsOf(benchIds: readonly string[], from: number, to: number, step: number): Promise<Map<string, CountsResult>> {
  const grid = gridFor(from, to, step);
  if (grid.levelMs === null) throw new HttpError(422, 'step must be a multiple of 1000 ms');
  const channelInfo = await channelsOfBenches(benchIds);
  const parts = new Map(benchIds.map((id) => [id, bucketsOf(grid, channelInfo.get(id) ?? [])]));
  await fillFromRollups(grid, grid.levelMs, [...parts.values()]);
  return new Map([...parts].map(([id, p]) => [id, resultOf(grid, p)]));
}

export async function queryCounts(benchId: string, from: number, to: number, step: number): Promise<CountsResult> {
  const grid = gridFor(from, to, step);
  const { t0, points, end } = grid;
  const part = bucketsOf(grid, await benchChannels(benchId));
  const { b, covered, binMs } = part;
  const gatewayIds = [...covered.keys()];
  let xSum: number[] | null = null;
  let xN: number[] | null = null;

  if (grid.levelMs !== null) {
    await fillFromRollups(grid, grid.levelMs, [part]);
  } else if (gatewayIds.length) {
    const rows = await rawRowsIn(gatewayIds, t0, end);
    // Contract: `step` is a multiple of the stored bin width. Otherwise buckets hold unequal numbers
    // of bins (step 15 on 10 ms bins: 2, 1, 2, … bins a bucket) or none (step 7: every third empty).
    const misfit = rows.find((r) => step % r.dt !== 0);
    if (misfit) throw new HttpError(422, `step ${step} ms is not a multiple of the stored bin width (${misfit.dt} ms from ${misfit.gateway_id}): use a multiple of ${misfit.dt} ms`);
    for (const r of rows.map(unpackRow)) {
      const cov = covered.get(r.gateway_id)!;
      binMs.set(r.gateway_id, r.dt);
      r.keys.forEach((key, k) => {
        const name = `${r.gateway_id}/${key}`;
        for (let j = 0; j < r.n; j++) {
          const at = b.index(r.t0 + j * r.dt);
          if (at >= 0) b.add(name, at, r.counts[k * r.n + j]!);
        }
      });
      for (let j = 0; j < r.n; j++) {
        const at = b.index(r.t0 + j * r.dt);
        if (at < 0) continue;
        cov[at]! += r.dt;
        if (r.cc) b.add('#cc', at, r.cc[j]!);
        if (r.x) {
          xSum ??= new Array<number>(points).fill(0);
          xN ??= new Array<number>(points).fill(0);
          xSum[at]! += r.x[j]!;
          xN[at]! += 1;
        }
      }
    }
  }

  if (xSum && xN) {
    const n = xN;
    return resultOf(grid, part, xSum.map((s, i) => (n[i] ? s / n[i]! : null)));
  }
  return resultOf(grid, part);
}
