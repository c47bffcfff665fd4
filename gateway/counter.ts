// The driver interface between a photon counter (simulated, serial, replayed file) and the
// gateway core. A driver only produces time-stamped bins and, when it has a piezo drive, executes
// commands; numbering, buffering and MQTT are the gateway's job.
import type { CommandBody } from '../src/lib/contract/wire.ts';

/** Bins as a driver hands them over: the count batch of the contract without v, boot and seq. */
export interface Bins {
  /** Start of the first bin, ms since the epoch, a multiple of `dt`. */
  t0: number;
  /** Bin width, ms. */
  dt: number;
  ch: Record<string, number[]>;
  x?: number[];
  cc?: number[];
}

/** What the counter counts, for the status message. */
export interface CounterInfo {
  channels: string[];
  /** The drive's accepted range; absent when the driver has no scan drive. */
  scan?: { min: number; max: number; unit: string };
}

/**
 * Most bins in one batch: 1,000 bins of six 11-digit columns stay near 70 KiB, well inside the
 * contract's 256 KiB per message (its 10,000-bin limit would not).
 */
export const MAX_BATCH_BINS = 1000;

export type CommandResult = { ok: true } | { ok: false; error: string };

export interface CounterSink {
  /**
   * Hands over a batch; resolves once it is stored in the gateway's queue (never rejects: the
   * gateway logs its own failures). Real-time drivers need not wait; a file replay waits, which
   * paces it to the disk.
   */
  bins(bins: Bins): Promise<void>;
  /** The counter's channels or scan changed (a serial counter's new header line). */
  info(info: CounterInfo): void;
  /** A recoverable problem worth a log line (a bad serial line); the driver carries on. */
  warn(message: string): void;
  /** The source is exhausted (end of a replayed file, serial device closed). */
  end(error?: Error): void;
}

export interface Counter {
  /** Starts counting; resolves once the counter knows its channels (a serial one: after its header). */
  start(sink: CounterSink): Promise<CounterInfo>;
  /** Executes a validated, in-range command; absent when the driver has no scan drive. */
  command?(cmd: CommandBody): CommandResult;
  /** Stops producing bins; pending bins are handed to the sink first. */
  stop(): Promise<void>;
}

/**
 * Collects bins one at a time into contiguous batches: a batch ends when it spans `maxSpanMs` of
 * bin time, when the next bin is not the next on the grid (a gap, a restart), or when the column
 * layout changes. Used by the line- and file-based drivers, whose bins arrive one by one.
 */
export class BinAccumulator {
  private t0 = 0;
  private dt = 0;
  private keys: string[] = [];
  private counts: number[][] = [];
  private x: number[] | null = null;
  private cc: number[] | null = null;

  constructor(
    private readonly emit: (bins: Bins) => void,
    /** Bin time per batch, ms: 100 ms keeps latency low while putting many bins in a message. */
    private readonly maxSpanMs = 100,
  ) {}

  get size(): number {
    return this.counts[0]?.length ?? 0;
  }

  /** `t` is the bin's start (ms since the epoch, a multiple of `dt`); `counts` follow `keys`. */
  push(t: number, dt: number, keys: readonly string[], counts: readonly number[], x?: number, cc?: number): void {
    const n = this.size;
    const fits =
      n > 0 &&
      dt === this.dt &&
      t === this.t0 + n * dt &&
      sameKeys(keys, this.keys) &&
      (x === undefined) === (this.x === null) &&
      (cc === undefined) === (this.cc === null);
    if (!fits) {
      this.flush();
      this.t0 = t;
      this.dt = dt;
      this.keys = [...keys];
      this.counts = keys.map(() => []);
      this.x = x === undefined ? null : [];
      this.cc = cc === undefined ? null : [];
    }
    counts.forEach((c, i) => this.counts[i]!.push(c));
    if (x !== undefined) this.x?.push(x);
    if (cc !== undefined) this.cc?.push(cc);
    if ((this.size + 1) * dt > this.maxSpanMs || this.size >= MAX_BATCH_BINS) this.flush();
  }

  flush(): void {
    if (this.size === 0) return;
    // Own properties even for a channel "__proto__" (assignment would set the prototype instead).
    const ch: Record<string, number[]> = Object.fromEntries(this.keys.map((k, i) => [k, this.counts[i]!]));
    const bins: Bins = { t0: this.t0, dt: this.dt, ch };
    if (this.x) bins.x = this.x;
    if (this.cc) bins.cc = this.cc;
    this.counts = this.keys.map(() => []);
    this.x = this.x && [];
    this.cc = this.cc && [];
    this.emit(bins);
  }
}

function sameKeys(a: readonly string[], b: readonly string[]): boolean {
  return a.length === b.length && a.every((k, i) => k === b[i]);
}
