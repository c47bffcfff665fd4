// The last few seconds of one bench's bins, kept in memory for the live figures (rates, Mandel Q,
// g2(0), phase at hold). Older data is read from the database when asked for.
import type { CountBatch } from '../../contract/wire.ts';

/**
 * One batch as held: its series copied into one Float64Array. Holding the decoded batch kept its
 * plain arrays alive past two young-generation collections, so every one was copied twice and
 * promoted (~1.6 MB per scavenge at the benchmark's realistic load); a typed array's store lives
 * outside the V8 heap, and a collection moves only the few small objects here.
 */
interface HeldBatch {
  gatewayId: string;
  t0: number;
  dt: number;
  /** Bins in the batch. */
  n: number;
  /** End of the batch's last bin, ms. */
  end: number;
  /** Channel key → offset of its n values in `values`. */
  keys: ReadonlyMap<string, number>;
  /** Offsets of the scan positions and the coincidences, −1 when the batch has none. */
  xAt: number;
  ccAt: number;
  values: Float64Array;
}

export interface ChannelSeries {
  /** Counts per bin, oldest first, within the window. */
  counts: Float64Array;
  dtMs: number;
  /** Indices of the bins that follow a gap (a batch missing or late): their predecessor is not their neighbour in time. */
  gapsBefore: number[];
}

/** How far past the server's clock a batch may end and still feed the live figures, ms. */
const FUTURE_SLACK_MS = 60_000;

/**
 * Most values held per bench (32 MB): 12 s of 20 gateways × 4 channels at 1 kHz is ~1 M. A flood
 * beyond that (the ingest benchmark's saturation stores ~7 M bins a second) shortens the window
 * the figures are read over instead of growing the server by gigabytes.
 */
const MAX_HELD_VALUES = 4_000_000;

function spanOf(batch: CountBatch): { t0: number; end: number } {
  const n = Object.values(batch.ch)[0]?.length ?? 0;
  return { t0: batch.t0, end: batch.t0 + n * batch.dt };
}

export class RecentBins {
  private batches: HeldBatch[] = [];
  private latest = 0;
  private held = 0;
  /** The last key layout per gateway: consecutive batches share one map instead of each building its own. */
  private layouts = new Map<string, ReadonlyMap<string, number>>();
  /**
   * Per gateway given stored bins by `preload`, the end of the newest of them, until a batch past it
   * arrives: a batch announced while the stored ones were read may be among them.
   */
  private preloaded = new Map<string, number>();

  constructor(private readonly keepMs = 12_000) {}

  /**
   * Holds a stored batch for the figures, unless it ends more than FUTURE_SLACK_MS past `now`: a
   * gateway whose clock runs far ahead (the contract takes any t0) would otherwise move every
   * window to its time, and the bench's figures would go blank until the server restarted.
   */
  add(gatewayId: string, batch: CountBatch, now = Date.now()): void {
    if (this.preloaded.size > 0 && this.isPreloaded(gatewayId, batch)) return;
    const held = this.hold(gatewayId, batch, now);
    if (!held) return;
    this.batches.push(held);
    this.trim();
  }

  /**
   * Holds batches read back from storage (the last window before a restart), leaving out any that
   * overlap a batch already held: a gateway's stored spans never overlap, so an overlap is the same
   * bins, which arrived live while they were read.
   */
  preload(gatewayId: string, batches: readonly CountBatch[], now = Date.now()): void {
    let until = this.preloaded.get(gatewayId) ?? -Infinity;
    for (const batch of batches) {
      const { t0, end } = spanOf(batch);
      if (this.overlapsHeld(gatewayId, t0, end)) continue;
      const held = this.hold(gatewayId, batch, now);
      if (!held) continue;
      this.batches.push(held);
      until = Math.max(until, held.end);
    }
    if (until > -Infinity) this.preloaded.set(gatewayId, until);
    // Older than the live batches held before them: `trim` drops from the front.
    this.batches.sort((p, q) => p.end - q.end);
    this.trim();
  }

  /** Whether a batch arriving live was preloaded already; forgets the gateway's preload once one passes it. */
  private isPreloaded(gatewayId: string, batch: CountBatch): boolean {
    const until = this.preloaded.get(gatewayId);
    if (until === undefined) return false;
    const { t0, end } = spanOf(batch);
    if (t0 >= until) {
      this.preloaded.delete(gatewayId);
      return false;
    }
    return this.overlapsHeld(gatewayId, t0, end);
  }

  private overlapsHeld(gatewayId: string, t0: number, end: number): boolean {
    return this.batches.some((b) => b.gatewayId === gatewayId && b.t0 < end && t0 < b.end);
  }

  private hold(gatewayId: string, batch: CountBatch, now: number): HeldBatch | null {
    const series = Object.values(batch.ch);
    const n = series[0]?.length ?? 0;
    const end = batch.t0 + n * batch.dt;
    if (end > now + FUTURE_SLACK_MS) return null;
    const keys = this.layout(gatewayId, Object.keys(batch.ch), n);
    const xAt = batch.x ? series.length * n : -1;
    const ccAt = batch.cc ? series.length * n + (batch.x ? n : 0) : -1;
    const values = new Float64Array(series.length * n + (batch.x ? n : 0) + (batch.cc ? n : 0));
    series.forEach((s, i) => values.set(s, i * n));
    if (batch.x) values.set(batch.x, xAt);
    if (batch.cc) values.set(batch.cc, ccAt);
    this.held += values.length;
    if (end > this.latest) this.latest = end;
    return { gatewayId, t0: batch.t0, dt: batch.dt, n, end, keys, xAt, ccAt, values };
  }

  private trim(): void {
    // Batches arrive in order per gateway, so the oldest sit at the front; a late (replayed) one
    // further back ages out once it reaches the front.
    const horizon = this.latest - this.keepMs;
    let drop = 0;
    while (drop < this.batches.length && ((this.batches[drop]?.end ?? 0) < horizon || this.held > MAX_HELD_VALUES)) {
      this.held -= this.batches[drop]!.values.length;
      drop++;
    }
    if (drop > 0) this.batches.splice(0, drop);
  }

  latestEnd(): number {
    return this.latest;
  }

  /** Bins of `gatewayId/key` ending in (to − windowMs, to], in time order. */
  series(gatewayId: string, key: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => b.keys.get(key) ?? -1);
  }

  coincidences(gatewayId: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => b.ccAt);
  }

  scan(gatewayId: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => b.xAt);
  }

  private layout(gatewayId: string, keys: string[], n: number): ReadonlyMap<string, number> {
    const last = this.layouts.get(gatewayId);
    if (last && last.size === keys.length && keys.every((k, i) => last.get(k) === i * n)) return last;
    const made = new Map(keys.map((k, i) => [k, i * n]));
    this.layouts.set(gatewayId, made);
    return made;
  }

  /** Gathers the values at `offsetOf(batch)` (−1: none) of the gateway's batches in the window. */
  private collect(gatewayId: string, windowMs: number, to: number, offsetOf: (b: HeldBatch) => number): ChannelSeries | null {
    const from = to - windowMs;
    const parts: { held: HeldBatch; at: number }[] = [];
    for (const held of this.batches) {
      if (held.gatewayId !== gatewayId || held.end <= from || held.t0 >= to) continue;
      const at = offsetOf(held);
      if (at >= 0) parts.push({ held, at });
    }
    if (parts.length === 0) return null;
    parts.sort((p, q) => p.held.t0 - q.held.t0);
    const dt = parts[0]!.held.dt;
    const out: number[] = [];
    const gapsBefore: number[] = [];
    let next = NaN;
    for (const { held, at } of parts) {
      if (held.dt !== dt) continue;
      for (let i = 0; i < held.n; i++) {
        const t = held.t0 + i * dt;
        if (t < from || t + dt > to) continue;
        if (out.length > 0 && t !== next) gapsBefore.push(out.length);
        out.push(held.values[at + i] as number);
        next = t + dt;
      }
    }
    return out.length ? { counts: Float64Array.from(out), dtMs: dt, gapsBefore } : null;
  }
}
