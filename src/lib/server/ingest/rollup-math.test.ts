// Rollup deltas against the definition, bin by bin: each bin's count goes to the bucket of each
// level that holds its start (DEVELOPERS.md, "Rollups"). Our own bookkeeping, not physics: the
// reference is the plain per-bin loop the fast per-second sums replaced.
import { describe, expect, it } from 'vitest';
import type { Slice } from './coverage.ts';
import { BLOCK_LEN, CC_KEY, ROLLUP_LEVELS_MS, rollupDeltas } from './rollup-math.ts';

function byDefinition(items: { gatewayId: string; slice: Slice }[]) {
  const sums = new Map<string, { sum: number; bins: number }>();
  const put = (gw: string, key: string, t: number, v: number) => {
    for (const step of ROLLUP_LEVELS_MS) {
      const id = `${gw}|${key}|${step}|${Math.floor(t / step) * step}`;
      const e = sums.get(id) ?? { sum: 0, bins: 0 };
      e.sum += v;
      e.bins += 1;
      sums.set(id, e);
    }
  };
  for (const { gatewayId, slice: s } of items) {
    for (let j = 0; j < s.n; j++) {
      s.keys.forEach((k, i) => put(gatewayId, k, s.t0 + j * s.dt, s.channels[i]![j]!));
      if (s.cc) put(gatewayId, CC_KEY, s.t0 + j * s.dt, s.cc[j]!);
    }
  }
  return sums;
}

function flatten(deltas: ReturnType<typeof rollupDeltas>) {
  const sums = new Map<string, { sum: number; bins: number }>();
  for (const d of deltas) {
    d.slots.forEach((slot, j) => sums.set(`${d.gatewayId}|${d.key}|${d.stepMs}|${d.blockT0 + slot * d.stepMs}`, { sum: d.sums[j]!, bins: d.bins[j]! }));
  }
  return sums;
}

const slice = (t0: number, dt: number, n: number, keys: string[], cc = false): Slice => ({
  t0,
  dt,
  n,
  keys,
  channels: keys.map((_, k) => Array.from({ length: n }, (_, j) => ((k * n + j) * 37) % 101)),
  x: null,
  cc: cc ? Array.from({ length: n }, (_, i) => i % 4) : null,
});

describe('rollupDeltas', () => {
  it.each([
    ['1 ms bins inside one second', [slice(1_796_000_000_100, 1, 100, ['a', 'b'])]],
    ['1 ms bins across a second and a minute boundary', [slice(1_796_000_059_950, 1, 100, ['a'], true)]],
    ['bins of 300 ms (not a divisor of 1 s)', [slice(1_796_000_000_000, 300, 500, ['a', 'b'])]],
    ['bins of 5 s', [slice(1_796_000_000_000, 5_000, 100, ['a'])]],
    ['a late slice written after a later one of the same write', [slice(1_796_000_001_500, 10, 150, ['a']), slice(1_796_000_000_000, 10, 150, ['a'])]],
    ['two gateways and adjacent slices merged', [slice(1_796_000_000_000, 10, 150, ['a']), slice(1_796_000_001_500, 10, 150, ['a']), { ...slice(1_796_000_000_000, 10, 80, ['h'], true) }]],
  ])('%s: sums and bin counts per bucket as by definition', (_name, slices) => {
    const items = slices.map((s, i) => ({ gatewayId: i === 2 ? 'gw-2' : 'gw-1', slice: s }));
    const deltas = rollupDeltas(items);
    expect(flatten(deltas)).toEqual(byDefinition(items));
    for (const d of deltas) {
      expect(d.blockT0 % (d.stepMs * BLOCK_LEN)).toBe(0);
      // Slots once each, ascending, inside the block.
      expect(d.slots.every((s, j) => s >= 0 && s < BLOCK_LEN && (j === 0 || s > d.slots[j - 1]!))).toBe(true);
    }
    expect(new Set(deltas.map((d) => `${d.gatewayId}|${d.key}|${d.stepMs}|${d.blockT0}`)).size).toBe(deltas.length);
  });
});
