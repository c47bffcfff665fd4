// Follows one bench's two outputs as batches arrive and hands back each monotonic pass of the
// scan coordinate once it is complete (the drive reversed, or came to rest), ready to fit.
import { splitSweeps, type SweepDirection } from '../../analysis/sweep-split.ts';

export interface CompletedPass {
  startMs: number;
  endMs: number;
  direction: SweepDirection;
  /** Bins grouped where the drive dwelt (same x), so fits see at most `maxPoints` points. */
  x: Float64Array;
  a: Float64Array;
  b: Float64Array;
  /** Raw bins summed into each point (for dark offsets per point). */
  binsPerPoint: Float64Array;
  dtMs: number;
}

export interface SweepTrackerOptions {
  /** Longest pass kept, bins: 10 min of 1 ms bins is far beyond any sweep an operator runs. */
  maxBins?: number;
  /** The drive resting this long ends the pass in progress, ms. */
  restMs?: number;
  /** Most points handed to the fit; more are grouped (consecutive bins, mean x). */
  maxPoints?: number;
}

class Growable {
  data = new Float64Array(4096);
  length = 0;
  push(values: ArrayLike<number>): void {
    if (this.length + values.length > this.data.length) {
      const next = new Float64Array(Math.max(this.data.length * 2, this.length + values.length));
      next.set(this.data.subarray(0, this.length));
      this.data = next;
    }
    for (let i = 0; i < values.length; i++) this.data[this.length + i] = values[i] as number;
    this.length += values.length;
  }
  dropFirst(k: number): void {
    this.data.copyWithin(0, k, this.length);
    this.length -= k;
  }
  view(): Float64Array {
    return this.data.subarray(0, this.length);
  }
}

export class SweepTracker {
  private readonly x = new Growable();
  private readonly a = new Growable();
  private readonly b = new Growable();
  private t0 = 0;
  private dt = 0;
  private readonly maxBins: number;
  private readonly restMs: number;
  private readonly maxPoints: number;

  constructor(opts: SweepTrackerOptions = {}) {
    this.maxBins = opts.maxBins ?? 600_000;
    this.restMs = opts.restMs ?? 1_000;
    this.maxPoints = opts.maxPoints ?? 2_000;
  }

  /** Where the bins seen so far end, ms: a batch starting before it arrived late. */
  get seenUntil(): number {
    return this.t0 + this.x.length * this.dt;
  }

  /** Start of the oldest bin still held (the pass under way, or the rest before one), ms: every pass before it is done with. */
  get heldFrom(): number {
    return this.t0;
  }

  /**
   * Appends a batch; returns the passes it completed. A batch behind `seenUntil` (late) is ignored,
   * so the pass under way goes on (its caller refits the late span from storage); a gap or a new
   * bin width restarts the track.
   */
  push(t0: number, dt: number, x: ArrayLike<number>, a: ArrayLike<number>, b: ArrayLike<number>): CompletedPass[] {
    const expected = this.t0 + this.x.length * this.dt;
    if (t0 < expected) return [];
    if (this.x.length === 0 || dt !== this.dt || t0 !== expected) {
      this.reset();
      this.t0 = t0;
      this.dt = dt;
    }
    this.x.push(x);
    this.a.push(a);
    this.b.push(b);
    const done: CompletedPass[] = [];
    const passes = splitSweeps(this.x.view());
    const last = passes[passes.length - 1];
    for (const p of passes.slice(0, -1)) done.push(this.extract(p.start, p.end, p.direction));
    // With no pass under way the drive is resting: keep only the last rest period, which holds the
    // first step's dwell of a sweep about to start.
    let keepFrom = last ? last.start : Math.max(0, this.x.length - Math.ceil(this.restMs / this.dt));
    const restAt = last ? this.restedSince(last.start) : null;
    if (last && restAt !== null) {
      done.push(this.extract(last.start, restAt, last.direction));
      keepFrom = this.x.length;
    }
    if (this.x.length - keepFrom > this.maxBins) keepFrom = this.x.length - this.maxBins;
    this.drop(keepFrom);
    return done;
  }

  /** Ends the record (a file's last bin): the pass under way, if long enough, is complete too. */
  flush(): CompletedPass[] {
    const last = splitSweeps(this.x.view()).at(-1);
    const done = last ? [this.extract(last.start, last.end, last.direction)] : [];
    this.reset();
    return done;
  }

  reset(): void {
    this.drop(this.x.length);
  }

  /** Where the drive came to rest in the pass from `start`, if it has rested `restMs`; else null. */
  private restedSince(start: number): number | null {
    const xs = this.x.view();
    const n = xs.length;
    const restBins = Math.ceil(this.restMs / this.dt);
    if (n - start < restBins + 2) return null;
    const final = xs[n - 1] as number;
    let i = n - 1;
    while (i > start && xs[i - 1] === final) i--;
    return n - i >= restBins && i - start >= 8 ? i : null;
  }

  private drop(k: number): void {
    if (k <= 0) return;
    this.x.dropFirst(k);
    this.a.dropFirst(k);
    this.b.dropFirst(k);
    this.t0 += k * this.dt;
  }

  /**
   * Where the pass really starts: a drive that rested before sweeping leaves a long run of bins at
   * the first step, during which only the phase drift moved. Keep as much of it as one step's
   * dwell (the median run of equal x in the pass), so the first point weighs like the others.
   */
  private trimLeadingRest(start: number, end: number): number {
    const xs = this.x.view();
    const runs: number[] = [];
    let i = start;
    while (i < end) {
      let j = i + 1;
      while (j < end && xs[j] === xs[i]) j++;
      runs.push(j - i);
      i = j;
    }
    const first = runs[0] ?? 0;
    const sorted = runs.slice(1).sort((a, b) => a - b);
    const dwell = sorted[sorted.length >> 1] ?? first;
    return first > 2 * dwell ? start + first - dwell : start;
  }

  private extract(from: number, end: number, direction: SweepDirection): CompletedPass {
    const start = this.trimLeadingRest(from, end);
    const xs = this.x.view();
    const as = this.a.view();
    const bs = this.b.view();
    const n = end - start;
    // Group runs of equal x (the drive dwelling on a step) and, beyond maxPoints, neighbours too.
    const minGroup = Math.ceil(n / this.maxPoints);
    const gx: number[] = [];
    const ga: number[] = [];
    const gb: number[] = [];
    const gn: number[] = [];
    let i = start;
    while (i < end) {
      let j = i + 1;
      while (j < end && (xs[j] === xs[i] || j - i < minGroup)) j++;
      let sx = 0;
      let sa = 0;
      let sb = 0;
      for (let k = i; k < j; k++) {
        sx += xs[k] as number;
        sa += as[k] as number;
        sb += bs[k] as number;
      }
      gx.push(sx / (j - i));
      ga.push(sa);
      gb.push(sb);
      gn.push(j - i);
      i = j;
    }
    return {
      startMs: this.t0 + start * this.dt,
      endMs: this.t0 + end * this.dt,
      direction,
      x: Float64Array.from(gx),
      a: Float64Array.from(ga),
      b: Float64Array.from(gb),
      binsPerPoint: Float64Array.from(gn),
      dtMs: this.dt,
    };
  }
}
