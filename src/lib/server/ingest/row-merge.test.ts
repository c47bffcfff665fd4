// Joining a write's contiguous slices into rows, against the definition: every bin of every channel
// keeps its time and count (our own bookkeeping, common practice: a merge must be lossless), and
// slices that do not line up stay apart.
import { describe, expect, it } from 'vitest';
import type { Slice } from './coverage.ts';
import { mergeContiguous, type Row } from './row-merge.ts';
import type { StoredSlice } from './write-statement.ts';

function slice(gatewayId: string, t0: number, n: number, opts: { dt?: number; keys?: string[]; x?: boolean; cc?: boolean; seq?: number } = {}): StoredSlice {
  const dt = opts.dt ?? 1;
  const keys = opts.keys ?? ['a', 'b'];
  const channels = keys.map((_, k) => Array.from({ length: n }, (_, j) => (t0 + j * dt) * 10 + k));
  const s: Slice = { t0, dt, n, keys, channels, x: opts.x ? Array.from({ length: n }, (_, j) => t0 + j * dt + 0.5) : null, cc: opts.cc ? Array.from({ length: n }, (_, j) => t0 + j * dt) : null };
  return { gatewayId, slice: s, boot: 'b1', seq: opts.seq ?? t0 };
}

/** Every (gateway, key, time) → count, x and cc of the slices, read bin by bin. */
function bins(slices: { gatewayId: string; slice: Slice }[]) {
  const out = new Map<string, number | null>();
  for (const { gatewayId, slice: s } of slices) {
    for (let j = 0; j < s.n; j++) {
      const t = s.t0 + j * s.dt;
      s.keys.forEach((k, i) => out.set(`${gatewayId}/${k}/${t}`, s.channels[i]![j]!));
      out.set(`${gatewayId}/x/${t}`, s.x?.[j] ?? null);
      out.set(`${gatewayId}/cc/${t}`, s.cc?.[j] ?? null);
    }
  }
  return out;
}

/** The same of rows: counts from their parts, and x and cc from the row's own (joined) arrays. */
function rowBins(rows: Row[]) {
  const out = new Map<string, number | null>();
  for (const r of rows) {
    let at = 0;
    for (const p of r.parts) {
      for (let j = 0; j < p.n; j++) {
        const t = r.t0 + (at + j) * r.dt;
        r.keys.forEach((k, i) => out.set(`${r.gatewayId}/${k}/${t}`, p.channels[i]![j]!));
        out.set(`${r.gatewayId}/x/${t}`, r.x?.[at + j] ?? null);
        out.set(`${r.gatewayId}/cc/${t}`, r.cc?.[at + j] ?? null);
      }
      at += p.n;
    }
    expect(at).toBe(r.n);
  }
  return out;
}

describe('mergeContiguous', () => {
  it('joins a gateway’s contiguous slices, interleaved with another gateway’s, into one row each, bins unchanged', () => {
    const input = [slice('g1', 0, 3, { x: true, cc: true }), slice('g2', 100, 2), slice('g1', 3, 2, { x: true, cc: true }), slice('g2', 102, 4), slice('g1', 5, 1, { x: true, cc: true })];
    const rows = mergeContiguous(input);
    expect(rows.map((r) => [r.gatewayId, r.t0, r.n, r.seq])).toEqual([
      ['g1', 0, 6, 0],
      ['g2', 100, 6, 100],
    ]);
    expect(rowBins(rows)).toEqual(bins(input));
  });

  it('keeps apart what does not line up: a gap, another bin width, other channels, x or cc on one side only', () => {
    const cases: StoredSlice[][] = [
      [slice('g', 0, 2), slice('g', 3, 2)],
      [slice('g', 0, 2, { dt: 2 }), slice('g', 4, 2, { dt: 1 })],
      [slice('g', 0, 2), slice('g', 2, 2, { keys: ['a', 'c'] })],
      [slice('g', 0, 2), slice('g', 2, 2, { x: true })],
      [slice('g', 0, 2, { cc: true }), slice('g', 2, 2)],
      // Earlier than the row's end (a late bin of another span) is not a continuation either.
      [slice('g', 10, 2), slice('g', 0, 2)],
    ];
    for (const input of cases) {
      const rows = mergeContiguous(input);
      expect(rows).toHaveLength(2);
      expect(rowBins(rows)).toEqual(bins(input));
    }
  });

  it('never joins across a reboot, and bounds a row by its counts on wide benches', () => {
    const rebooted = { ...slice('g', 2, 2), boot: 'b2' };
    expect(mergeContiguous([slice('g', 0, 2), rebooted])).toHaveLength(2);
    // 32 channels: 24,000 counts are 750 bins a row, so two batches of 500 stay apart.
    const keys = Array.from({ length: 32 }, (_, i) => `c${i}`);
    expect(mergeContiguous([slice('g', 0, 500, { keys }), slice('g', 500, 500, { keys })])).toHaveLength(2);
    expect(mergeContiguous([slice('g', 0, 300, { keys }), slice('g', 300, 300, { keys })])).toHaveLength(1);
  });

  it('starts a new row where the bins would pass the bound', () => {
    const rows = mergeContiguous([slice('g', 0, 4), slice('g', 4, 4), slice('g', 8, 4)], 8);
    expect(rows.map((r) => [r.t0, r.n])).toEqual([
      [0, 8],
      [8, 4],
    ]);
  });
});
