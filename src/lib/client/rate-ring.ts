// Live count rates as a ring of fixed-width time buckets per channel, in typed arrays allocated
// once: messages add into buckets, redraws copy the visible span into reused output arrays.
// 100 ms buckets × 6000 = the longest window (10 min) at a resolution the eye can follow. A bin
// is shared out over the buckets it overlaps by the time it spends in each, so bins of any width
// (40 ms, 1 s, a 1 s backfill) land in the same buckets and nothing has to start over.

export const BUCKET_MS = 100;
export const CAPACITY = 6000;
/**
 * Bins starting later than this past the browser's clock are not drawn (ms): one from a gateway
 * whose clock is far ahead would make every true bin look older than the ring holds.
 */
const FUTURE_SLACK_MS = 60_000;

export class RateRing {
  readonly bucketMs = BUCKET_MS;
  readonly keys: string[];
  private readonly sums: Float64Array[];
  /**
   * Per channel, milliseconds of bins that landed in each bucket (a partly filled bucket is not a
   * dim one). Per channel because a bench's channels may come from several gateways, each filling
   * the bucket with its own bins.
   */
  private readonly covered: Float64Array[];
  /** Bucket index (t / bucketMs) held in each slot; −1 when empty. */
  private readonly slotIndex: Float64Array;
  /** Per channel, 1 where a backfill's bucket may still have been filling when read: live bins replace it. */
  private readonly provisional: Uint8Array[];
  private newest = -1;
  /** Output arrays reused by every `view` call: seconds since the epoch, then rates in counts/s. */
  private readonly outX = new Float64Array(CAPACITY);
  private readonly outY: Float64Array[];

  constructor(keys: string[]) {
    this.keys = keys;
    this.sums = keys.map(() => new Float64Array(CAPACITY));
    this.outY = keys.map(() => new Float64Array(CAPACITY));
    this.covered = keys.map(() => new Float64Array(CAPACITY));
    this.slotIndex = new Float64Array(CAPACITY).fill(-1);
    this.provisional = keys.map(() => new Uint8Array(CAPACITY));
  }

  /**
   * Adds bins [t0 + i·dt, t0 + (i+1)·dt) of the channels present in `ch` (others left as they are).
   * `t0`, `dt` in ms; counts per bin. With `fillOnly` (a backfill, bins at least a bucket wide),
   * a channel's bucket that already holds its data is left alone: a backfill arriving after live
   * messages must not count them twice. With `provisional` too, the buckets it fills may have been
   * read while their bins were still arriving: the channel's first live bins for such a bucket
   * replace it, or its partial sum spread over the whole bucket would show as a dip.
   */
  add(t0: number, dt: number, ch: Record<string, ArrayLike<number>>, fillOnly = false, provisional = false): void {
    const cols = this.keys.map((k) => ch[k]);
    const n = cols.find((c) => c)?.length ?? 0;
    const w = this.bucketMs;
    const horizon = Date.now() + FUTURE_SLACK_MS;
    for (let i = 0; i < n; i++) {
      const start = t0 + i * dt;
      if (start > horizon) break;
      const end = start + dt;
      for (let idx = Math.floor(start / w); idx * w < end; idx++) {
        // Older than the ring holds: nothing to show it in.
        if (this.newest >= 0 && idx <= this.newest - CAPACITY) continue;
        const slot = idx % CAPACITY;
        if (this.slotIndex[slot] !== idx) {
          this.slotIndex[slot] = idx;
          for (let c = 0; c < cols.length; c++) {
            this.sums[c]![slot] = 0;
            this.covered[c]![slot] = 0;
            this.provisional[c]![slot] = 0;
          }
        }
        const overlap = Math.min(end, (idx + 1) * w) - Math.max(start, idx * w);
        const share = overlap / dt;
        for (let c = 0; c < cols.length; c++) {
          const col = cols[c];
          if (!col) continue;
          if (fillOnly && this.covered[c]![slot]! > 0) continue;
          if (!fillOnly && this.provisional[c]![slot]) {
            this.sums[c]![slot] = 0;
            this.covered[c]![slot] = 0;
            this.provisional[c]![slot] = 0;
          }
          this.covered[c]![slot]! += overlap;
          this.sums[c]![slot]! += col[i]! * share;
          if (fillOnly && provisional) this.provisional[c]![slot] = 1;
        }
        if (idx > this.newest) this.newest = idx;
      }
    }
  }

  /** Whether any channel has bins in the slot (a plain loop: this runs per bucket on every redraw). */
  private holdsData(slot: number): boolean {
    for (const cov of this.covered) if (cov[slot]! > 0) return true;
    return false;
  }

  /** Newest bucket's start, ms; null when empty. */
  newestMs(): number | null {
    return this.newest < 0 ? null : this.newest * this.bucketMs;
  }

  /**
   * Buckets from `fromMs` on that hold data, as [x (s), ...rates (counts/s)] views into the reused
   * output arrays (valid until the next call). `floor` clamps rates up for log axes.
   */
  view(fromMs: number, floor = 0): { x: Float64Array; y: Float64Array[] } {
    let len = 0;
    if (this.newest >= 0) {
      const first = Math.max(Math.floor(fromMs / this.bucketMs), this.newest - CAPACITY + 1);
      for (let idx = first; idx <= this.newest; idx++) {
        const slot = idx % CAPACITY;
        if (this.slotIndex[slot] !== idx || !this.holdsData(slot)) continue;
        this.outX[len] = (idx * this.bucketMs) / 1000;
        for (let c = 0; c < this.keys.length; c++) {
          const cov = this.covered[c]![slot]!;
          // A channel whose gateway has not reached this bucket yet (its batches come slower than
          // another's) keeps its last rate rather than drop to zero.
          const r = cov > 0 ? (this.sums[c]![slot]! * 1000) / cov : len > 0 ? this.outY[c]![len - 1]! : floor;
          this.outY[c]![len] = r < floor ? floor : r;
        }
        len++;
      }
    }
    return { x: this.outX.subarray(0, len), y: this.outY.map((a) => a.subarray(0, len)) };
  }
}
