// Rollup deltas for newly stored bins. Each level keeps sums in blocks of 60 (level 1 s: one row
// per minute; level 1 min: one row per hour). A bin goes to the bucket holding its start: when the
// asked step is a multiple of both the level and the bin width (the contract requires the latter),
// the whole bin lies in the step that holds its start, so sums by start are exact. The 1 min sums
// are built from the 1 s ones: the minute holding a bin's start holds its second's start too. Pure.
import type { Slice } from './coverage.ts';

export const ROLLUP_LEVELS_MS = [1_000, 60_000] as const;
export const BLOCK_LEN = 60;
/** Rollup key for coincidences: not a valid channel key, so it can never collide with one. */
export const CC_KEY = '#cc';

/**
 * What a write adds to one block: the touched slots only, ascending, with their sums and bin
 * counts (`sums[j]` belongs to slot `slots[j]`). A batch of 100 ms touches one slot of 60; dense
 * blocks of zeros were most of what the server allocated per write.
 */
export interface RollupDelta {
  gatewayId: string;
  key: string;
  stepMs: number;
  blockT0: number;
  slots: number[];
  sums: number[];
  bins: number[];
}

const [SECOND_MS, MINUTE_MS] = ROLLUP_LEVELS_MS;

/** Adds the slices' bins into per-(gateway, key, level, block) deltas, merged across slices. */
export function rollupDeltas(items: { gatewayId: string; slice: Slice }[]): RollupDelta[] {
  // Blocks by gateway, key and level, then by block start: nested maps, because formatting a block
  // start or a series into a string key for every lookup cost more than all the sums together.
  const series = new Map<string, Map<string, [Map<number, RollupDelta>, Map<number, RollupDelta>]>>();
  const levelsOf = (gatewayId: string, key: string) => {
    let byKey = series.get(gatewayId);
    if (!byKey) series.set(gatewayId, (byKey = new Map()));
    let levels = byKey.get(key);
    if (!levels) byKey.set(key, (levels = [new Map(), new Map()]));
    return levels;
  };
  const add = (blocks: Map<number, RollupDelta>, gatewayId: string, key: string, stepMs: number, t: number, sum: number, bins: number) => {
    const blockMs = stepMs * BLOCK_LEN;
    const blockT0 = Math.floor(t / blockMs) * blockMs;
    let d = blocks.get(blockT0);
    if (!d) {
      d = { gatewayId, key, stepMs, blockT0, slots: [], sums: [], bins: [] };
      blocks.set(blockT0, d);
    }
    const slot = Math.floor((t - blockT0) / stepMs);
    // In-order bins come to the last slot or after it; a late slice of the same write searches back.
    let j = d.slots.length;
    while (j > 0 && d.slots[j - 1]! > slot) j--;
    if (j > 0 && d.slots[j - 1] === slot) {
      d.sums[j - 1]! += sum;
      d.bins[j - 1]! += bins;
    } else if (j === d.slots.length) {
      d.slots.push(slot);
      d.sums.push(sum);
      d.bins.push(bins);
    } else {
      d.slots.splice(j, 0, slot);
      d.sums.splice(j, 0, sum);
      d.bins.splice(j, 0, bins);
    }
  };
  // One pass over the bins of a series, one lookup per second it touches (a batch of 100 bins of
  // 1 ms touches one or two), and one more per second for the minute level.
  const addSeries = (gatewayId: string, key: string, t0: number, dt: number, values: ArrayLike<number>, offset: number, n: number) => {
    const [seconds, minutes] = levelsOf(gatewayId, key);
    let j = 0;
    while (j < n) {
      const t = t0 + j * dt;
      const second = Math.floor(t / SECOND_MS) * SECOND_MS;
      // Bins j … end-1 start inside this second.
      const end = Math.min(n, j + Math.ceil((second + SECOND_MS - t) / dt));
      let sum = 0;
      for (let i = offset + j; i < offset + end; i++) sum += values[i]!;
      add(seconds, gatewayId, key, SECOND_MS, second, sum, end - j);
      add(minutes, gatewayId, key, MINUTE_MS, second, sum, end - j);
      j = end;
    }
  };
  for (const { gatewayId, slice } of items) {
    const { n, dt, t0 } = slice;
    for (let k = 0; k < slice.keys.length; k++) addSeries(gatewayId, slice.keys[k]!, t0, dt, slice.channels[k]!, 0, n);
    if (slice.cc) addSeries(gatewayId, CC_KEY, t0, dt, slice.cc, 0, n);
  }
  // A stable order keeps row locks in one order across transactions.
  return [...series.values()].flatMap((byKey) => [...byKey.values()].flatMap(([seconds, minutes]) => [...seconds.values(), ...minutes.values()])).sort((a, b) =>
    a.gatewayId < b.gatewayId ? -1 : a.gatewayId > b.gatewayId ? 1 : a.key < b.key ? -1 : a.key > b.key ? 1 : a.stepMs - b.stepMs || a.blockT0 - b.blockT0,
  );
}
