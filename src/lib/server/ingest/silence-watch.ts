// The I/O around the silence tracker (silence.ts): what it knows at start from the gateways' rows,
// a timer that asks it who has fallen silent, and a `status` message to the bench's pages for each
// change, so a silent gateway reads offline with the time it was last heard, and online again at its
// next word. Pages rendered meanwhile ask `silentSince` (server/gateway-presence.ts).
import { getDbHandle } from '../db/index.ts';
import { isImportGateway } from '../../import-shapes.ts';
import type { StatusMessage } from '../../live-messages.ts';
import type { Fanout } from './fanout.ts';
import { SilenceTracker, SILENT_FLOOR_MS, type SilenceChange } from './silence.ts';

export interface SilenceOptions {
  /** The least silence that counts, ms (SILENT_FLOOR_MS; tests shorten it). */
  floorMs?: number;
  /** How often silences are looked for, ms. */
  tickMs?: number;
}

/** A second: silences of minutes are announced within a second of passing their bound. */
const TICK_MS = 1_000;

export class SilenceWatch {
  private readonly tracker: SilenceTracker;
  private timer: NodeJS.Timeout | null = null;

  constructor(
    private readonly fanout: Fanout,
    private readonly opts: SilenceOptions = {},
  ) {
    this.tracker = new SilenceTracker(Date.now(), opts.floorMs ?? SILENT_FLOOR_MS);
  }

  /** Loads the online gateways' last arrival and latest row's span, then looks every tick. */
  async start(): Promise<void> {
    const { rows } = await getDbHandle().pool.query<{ id: string; bench_id: string; last_seen_at: Date | null; span: string | null }>(
      `select g.id, g.bench_id, g.last_seen_at,
              (select c.t1 - c.t0 from count_batches c where c.gateway_id = g.id order by c.t0 desc limit 1) as span
         from gateways g where g.revoked_at is null and g.status->>'state' = 'online'`,
    );
    // A stored row may join several batches of one write: its span is an upper bound, which only waits longer.
    for (const r of rows) if (!isImportGateway(r.id)) this.tracker.know(r.id, r.bench_id, r.last_seen_at?.getTime() ?? 0, Number(r.span ?? 0));
    this.timer = setInterval(() => this.tick(), this.opts.tickMs ?? TICK_MS);
    this.timer.unref();
  }

  stop(): void {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
  }

  heard(gateway: string, bench: string, at: number, spanMs?: number): void {
    const change = this.tracker.heard(gateway, bench, at, spanMs);
    if (change) this.announce(change, at);
  }

  status(gateway: string, bench: string, online: boolean, at: number): void {
    this.tracker.status(gateway, bench, online, at);
  }

  forget(gateway: string): void {
    this.tracker.forget(gateway);
  }

  silentSince(gateway: string): number | null {
    return this.tracker.silentSince(gateway);
  }

  private tick(): void {
    const now = Date.now();
    for (const change of this.tracker.due(now)) {
      console.warn(`[ingest] ${change.gateway}: nothing heard since ${new Date(change.silentSince!).toISOString()}; shown as silent`);
      this.announce(change, now);
    }
  }

  private announce(c: SilenceChange, at: number): void {
    const msg: StatusMessage =
      c.silentSince === null
        ? { type: 'status', bench: c.bench, gateway: c.gateway, state: 'online', at }
        : { type: 'status', bench: c.bench, gateway: c.gateway, state: 'offline', at, silentSince: c.silentSince };
    this.fanout.emit(c.bench, msg);
  }
}
