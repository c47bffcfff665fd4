// Rows of one write: slices of a gateway that continue each other (same bin width, channels and
// optional arrays, the next starting where the last ended) become one `count_batches` row. A busy
// broker puts dozens of a gateway's batches in one write; as one row each, PostgreSQL spent most of
// its time on per-row work (tuple, primary-key entry, WAL record) and the server on per-row
// parameters (DEVELOPERS.md, "Ingest benchmark"). A row never exceeds the contract's bins per batch,
// so every reader's bound on a row still holds. Live frames and outcomes are per batch and do not
// see this. Pure.
import { MAX_BINS } from '../../contract/wire.ts';
import type { Slice } from './coverage.ts';
import type { StoredSlice } from './write-statement.ts';

function continues(row: StoredSlice[], next: StoredSlice, maxBins: number): boolean {
  const first = row[0]!.slice;
  const last = row[row.length - 1]!.slice;
  const s = next.slice;
  let bins = s.n;
  for (const r of row) bins += r.slice.n;
  return (
    s.t0 === last.t0 + last.n * last.dt &&
    s.dt === first.dt &&
    s.keys.length === first.keys.length &&
    s.keys.every((k, i) => k === first.keys[i]) &&
    (s.x === null) === (first.x === null) &&
    (s.cc === null) === (first.cc === null) &&
    bins <= maxBins
  );
}

/** One slice holding the parts' bins in order, counts channel-major as in every slice. */
function joined(parts: StoredSlice[]): StoredSlice {
  if (parts.length === 1) return parts[0]!;
  const first = parts[0]!.slice;
  const n = parts.reduce((sum, p) => sum + p.slice.n, 0);
  const counts = new Array<number>(first.keys.length * n);
  let at = 0;
  for (const { slice } of parts) {
    for (let k = 0; k < first.keys.length; k++) {
      for (let j = 0; j < slice.n; j++) counts[k * n + at + j] = slice.counts[k * slice.n + j]!;
    }
    at += slice.n;
  }
  const concat = (pick: (s: Slice) => number[] | null) => (pick(first) ? parts.flatMap((p) => pick(p.slice)!) : null);
  // The row keeps the boot and seq of its first batch: they say where the row began.
  return { ...parts[0]!, slice: { t0: first.t0, dt: first.dt, n, keys: first.keys, counts, x: concat((s) => s.x), cc: concat((s) => s.cc) } };
}

/** Joins contiguous slices of each gateway, in the order their first slice came. */
export function mergeContiguous(stored: StoredSlice[], maxBins = MAX_BINS): StoredSlice[] {
  const rows: StoredSlice[][] = [];
  const open = new Map<string, StoredSlice[]>();
  for (const s of stored) {
    const row = open.get(s.gatewayId);
    if (row && continues(row, s, maxBins)) {
      row.push(s);
      continue;
    }
    const fresh = [s];
    rows.push(fresh);
    open.set(s.gatewayId, fresh);
  }
  return rows.map(joined);
}
