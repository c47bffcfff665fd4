// Exactly-once at bin level (contract: "each bin of each channel is stored at most once"). Stored
// batches of one gateway never overlap in time, so a new batch is compared with the stored spans
// it touches: identical span → duplicate; partly covered → only the uncovered bins are stored, as
// one slice per uncovered run; overlap with a different bin width or channel set → rejected, since
// the bins could not be lined up. Pure.
import type { CountBatch } from '../../contract/wire.ts';

export interface StoredSpan {
  t0: number;
  /** End of the last bin, exclusive, ms. */
  t1: number;
  dt: number;
  keys: string[];
}

export interface Slice {
  t0: number;
  dt: number;
  n: number;
  keys: string[];
  /**
   * Counts per channel, in `keys` order: channels[i][j] is channel keys[i], bin j. A batch stored
   * whole keeps the arrays it arrived with (copying 400 counts per batch was a tenth of the
   * saturated server's time, once here and once back for the live message).
   */
  channels: number[][];
  x: number[] | null;
  cc: number[] | null;
}

export type CoveragePlan = { kind: 'store'; slices: Slice[] } | { kind: 'duplicate' } | { kind: 'rejected'; reason: string };

export function batchSpan(b: Pick<CountBatch, 't0' | 'dt' | 'ch'>): { t0: number; t1: number; n: number; keys: string[] } {
  const keys = Object.keys(b.ch);
  // Gateways send their keys in one order, nearly always sorted already: sorting copies the array.
  for (let i = 1; i < keys.length; i++) {
    if (keys[i - 1]! > keys[i]!) {
      keys.sort();
      break;
    }
  }
  const n = b.ch[keys[0]!]!.length;
  return { t0: b.t0, t1: b.t0 + n * b.dt, n, keys };
}

function sameKeys(a: string[], b: string[]): boolean {
  return a.length === b.length && a.every((k, i) => k === b[i]);
}

function slice(b: CountBatch, keys: string[], from: number, to: number): Slice {
  const n = to - from;
  const whole = from === 0 && to === b.ch[keys[0]!]!.length;
  return {
    t0: b.t0 + from * b.dt,
    dt: b.dt,
    n,
    keys,
    channels: keys.map((k) => (whole ? b.ch[k]! : b.ch[k]!.slice(from, to))),
    x: b.x ? b.x.slice(from, to) : null,
    cc: b.cc ? b.cc.slice(from, to) : null,
  };
}

/** Plans what to store of `b` given the stored spans of the same gateway that overlap it. */
export function planBatch(b: CountBatch, overlapping: StoredSpan[]): CoveragePlan {
  const span = batchSpan(b);
  const touching = overlapping.filter((s) => s.t0 < span.t1 && s.t1 > span.t0).sort((p, q) => p.t0 - q.t0);
  if (touching.length === 0) return { kind: 'store', slices: [slice(b, span.keys, 0, span.n)] };
  for (const s of touching) {
    if (s.dt !== b.dt || (s.t0 - b.t0) % b.dt !== 0) return { kind: 'rejected', reason: `overlaps stored bins at ${s.t0} with a different bin grid (dt ${s.dt} ms)` };
    if (!sameKeys(s.keys, span.keys)) return { kind: 'rejected', reason: `overlaps stored bins at ${s.t0} with different channels (${s.keys.join(',')})` };
  }
  const slices: Slice[] = [];
  let cursor = 0; // bin index in b not yet known to be covered
  for (const s of touching) {
    const coveredFrom = Math.max(0, (s.t0 - b.t0) / b.dt);
    const coveredTo = Math.min(span.n, (s.t1 - b.t0) / b.dt);
    if (coveredFrom > cursor) slices.push(slice(b, span.keys, cursor, coveredFrom));
    cursor = Math.max(cursor, coveredTo);
  }
  if (cursor < span.n) slices.push(slice(b, span.keys, cursor, span.n));
  return slices.length ? { kind: 'store', slices } : { kind: 'duplicate' };
}
