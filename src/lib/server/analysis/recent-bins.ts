// The last few seconds of one bench's bins, kept in memory for the live figures (rates, Mandel Q,
// g2(0), phase at hold). Older data is read from the database when asked for.
import type { CountBatch } from '../../contract/wire.ts';

interface HeldBatch {
  gatewayId: string;
  batch: CountBatch;
  /** End of the batch's last bin, ms. */
  end: number;
}

export interface ChannelSeries {
  /** Counts per bin, oldest first, within the window. */
  counts: Float64Array;
  dtMs: number;
}

/** How far past the server's clock a batch may end and still feed the live figures, ms. */
const FUTURE_SLACK_MS = 60_000;

export class RecentBins {
  private batches: HeldBatch[] = [];
  private latest = 0;

  constructor(private readonly keepMs = 12_000) {}

  /**
   * Holds a stored batch for the figures, unless it ends more than FUTURE_SLACK_MS past `now`: a
   * gateway whose clock runs far ahead (the contract takes any t0) would otherwise move every
   * window to its time, and the bench's figures would go blank until the server restarted.
   */
  add(gatewayId: string, batch: CountBatch, now = Date.now()): void {
    const end = batch.t0 + (Object.values(batch.ch)[0]?.length ?? 0) * batch.dt;
    if (end > now + FUTURE_SLACK_MS) return;
    this.batches.push({ gatewayId, batch, end });
    if (end > this.latest) this.latest = end;
    // Batches arrive in order per gateway, so the oldest sit at the front; a late (replayed) one
    // further back ages out once it reaches the front.
    const horizon = this.latest - this.keepMs;
    let drop = 0;
    while (drop < this.batches.length && (this.batches[drop]?.end ?? 0) < horizon) drop++;
    if (drop > 0) this.batches.splice(0, drop);
  }

  latestEnd(): number {
    return this.latest;
  }

  /** Bins of `gatewayId/key` ending in (to − windowMs, to], in time order. */
  series(gatewayId: string, key: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => (Object.hasOwn(b.ch, key) ? b.ch[key] : undefined));
  }

  coincidences(gatewayId: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => b.cc);
  }

  scan(gatewayId: string, windowMs: number, to = this.latestEnd()): ChannelSeries | null {
    return this.collect(gatewayId, windowMs, to, (b) => b.x);
  }

  private collect(gatewayId: string, windowMs: number, to: number, pick: (b: CountBatch) => number[] | undefined): ChannelSeries | null {
    const from = to - windowMs;
    const parts: { t0: number; dt: number; values: number[] }[] = [];
    for (const held of this.batches) {
      if (held.gatewayId !== gatewayId || held.end <= from || held.batch.t0 >= to) continue;
      const values = pick(held.batch);
      if (values) parts.push({ t0: held.batch.t0, dt: held.batch.dt, values });
    }
    if (parts.length === 0) return null;
    parts.sort((p, q) => p.t0 - q.t0);
    const dt = parts[0]!.dt;
    const out: number[] = [];
    for (const p of parts) {
      if (p.dt !== dt) continue;
      for (let i = 0; i < p.values.length; i++) {
        const t = p.t0 + i * dt;
        if (t >= from && t + dt <= to) out.push(p.values[i] as number);
      }
    }
    return out.length ? { counts: Float64Array.from(out), dtMs: dt } : null;
  }
}
