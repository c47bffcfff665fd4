// Rollup deltas for newly stored bins. Each level keeps sums in blocks of 60 (level 1 s: one row
// per minute; level 1 min: one row per hour). A bin goes to the bucket holding its start: when the
// asked step is a multiple of both the level and the bin width (the contract requires the latter),
// the whole bin lies in the step that holds its start, so sums by start are exact. Pure.
import type { Slice } from './coverage.ts';

export const ROLLUP_LEVELS_MS = [1_000, 60_000] as const;
export const BLOCK_LEN = 60;
/** Rollup key for coincidences: not a valid channel key, so it can never collide with one. */
export const CC_KEY = '#cc';

export interface RollupDelta {
  gatewayId: string;
  key: string;
  stepMs: number;
  blockT0: number;
  sums: number[];
  bins: number[];
}

/** Adds the slices' bins into per-(gateway, key, level, block) deltas, merged across slices. */
export function rollupDeltas(items: { gatewayId: string; slice: Slice }[]): RollupDelta[] {
  const out = new Map<string, RollupDelta>();
  const block = (gatewayId: string, key: string, stepMs: number, blockT0: number): RollupDelta => {
    const id = `${gatewayId}\u0000${key}\u0000${stepMs}\u0000${blockT0}`;
    let d = out.get(id);
    if (!d) {
      d = { gatewayId, key, stepMs, blockT0, sums: new Array<number>(BLOCK_LEN).fill(0), bins: new Array<number>(BLOCK_LEN).fill(0) };
      out.set(id, d);
    }
    return d;
  };
  // One pass per series and level; the map is consulted only when a bin crosses into a new block.
  const addSeries = (gatewayId: string, key: string, t0: number, dt: number, values: ArrayLike<number>, offset: number, n: number) => {
    for (const stepMs of ROLLUP_LEVELS_MS) {
      const blockMs = stepMs * BLOCK_LEN;
      let d: RollupDelta | null = null;
      for (let j = 0; j < n; j++) {
        const t = t0 + j * dt;
        if (!d || t < d.blockT0 || t >= d.blockT0 + blockMs) d = block(gatewayId, key, stepMs, Math.floor(t / blockMs) * blockMs);
        const i = Math.floor((t - d.blockT0) / stepMs);
        d.sums[i]! += values[offset + j]!;
        d.bins[i]! += 1;
      }
    }
  };
  for (const { gatewayId, slice } of items) {
    const { n, dt, t0 } = slice;
    slice.keys.forEach((key, k) => addSeries(gatewayId, key, t0, dt, slice.counts, k * n, n));
    if (slice.cc) addSeries(gatewayId, CC_KEY, t0, dt, slice.cc, 0, n);
  }
  // A stable order keeps row locks in one order across transactions.
  return [...out.values()].sort((a, b) =>
    a.gatewayId < b.gatewayId ? -1 : a.gatewayId > b.gatewayId ? 1 : a.key < b.key ? -1 : a.key > b.key ? 1 : a.stepMs - b.stepMs || a.blockT0 - b.blockT0,
  );
}
