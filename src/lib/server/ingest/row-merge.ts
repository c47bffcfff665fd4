// Rows of one write: slices of a gateway that continue each other (same bin width, channels and
// optional arrays, the next starting where the last ended) become one `count_batches` row. A busy
// broker puts dozens of a gateway's batches in one write; as one row each, PostgreSQL spent most of
// its time on per-row work (tuple, primary-key entry, WAL record) and the server on per-row
// parameters (DEVELOPERS.md, "Ingest benchmark"). A row holds at most the contract's bins per batch
// and MAX_ROW_COUNTS counts in all (bins × channels), so one row as a live message (a resume replays
// rows) stays within a batch's 256 KiB and well inside a client's queue. It never spans a reboot:
// its boot and seq are those of its first batch. The counts stay in their slices (the write packs
// them from there: copying them into one array first cost as much as packing them). Live frames and
// outcomes are per batch and do not see this. Pure.
import { MAX_BINS } from '../../contract/wire.ts';
import type { Slice } from './coverage.ts';
import type { StoredSlice } from './write-statement.ts';

export interface Row {
  gatewayId: string;
  /** Boot and seq of the row's first batch: where the row began. */
  boot: string;
  seq: number;
  t0: number;
  dt: number;
  /** Bins of the row, all parts together. */
  n: number;
  keys: string[];
  /** The slices in time order; the row's counts of channel k are each part's counts of k in turn. */
  parts: Slice[];
  x: number[] | null;
  cc: number[] | null;
}

/** Most counts in one row, bins × channels: ~10 bytes each as JSON, so a row's message stays under 256 KiB. */
export const MAX_ROW_COUNTS = 24_000;

function continues(row: Row, next: Slice, boot: string, maxBins: number): boolean {
  const last = row.parts[row.parts.length - 1]!;
  if (next.t0 !== last.t0 + last.n * last.dt || next.dt !== row.dt || boot !== row.boot) return false;
  if (row.n + next.n > Math.min(maxBins, Math.floor(MAX_ROW_COUNTS / row.keys.length))) return false;
  if ((next.x === null) !== (row.x === null) || (next.cc === null) !== (row.cc === null)) return false;
  if (next.keys.length !== row.keys.length) return false;
  for (let i = 0; i < next.keys.length; i++) if (next.keys[i] !== row.keys[i]) return false;
  return true;
}

/** Joins contiguous slices of each gateway, in the order their first slice came. */
export function mergeContiguous(stored: StoredSlice[], maxBins = MAX_BINS): Row[] {
  const rows: Row[] = [];
  const open = new Map<string, Row>();
  for (const { gatewayId, boot, seq, slice } of stored) {
    const row = open.get(gatewayId);
    if (row && continues(row, slice, boot, maxBins)) {
      row.parts.push(slice);
      row.n += slice.n;
      continue;
    }
    const fresh: Row = { gatewayId, boot, seq, t0: slice.t0, dt: slice.dt, n: slice.n, keys: slice.keys, parts: [slice], x: slice.x, cc: slice.cc };
    rows.push(fresh);
    open.set(gatewayId, fresh);
  }
  for (const r of rows) {
    if (r.parts.length === 1) continue;
    if (r.x) r.x = r.parts.flatMap((p) => p.x!);
    if (r.cc) r.cc = r.parts.flatMap((p) => p.cc!);
  }
  return rows;
}
