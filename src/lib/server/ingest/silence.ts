// Which gateways have fallen silent: their status says online, yet nothing has arrived from them for
// far longer than a working gateway is ever quiet. With an external broker the server learns that a
// connection died only when the broker delivers the last will, and a broker can be slow to notice
// (a long keepalive, a half-open TCP connection); the embedded broker notices a dead connection
// within its keepalive, but a gateway that stays connected with a stalled counter sends nothing
// either. Both read the same to a lab: no data. Pure: the watch (silence-watch.ts) feeds it arrivals
// and the clock, and announces what it returns.
import { MAX_BIN_MS } from '../../contract/wire.ts';

/**
 * The least time an online gateway may go unheard before it counts as silent, ms. The contract
 * fixes no publishing period, but a bin's counts exist only once it has ended and the contract
 * bounds a bin at MAX_BIN_MS (60 s): a gateway that publishes its bins as they end is never quiet
 * for longer than one bin and the trip. Twice that leaves room for a late batch, a redelivery or a
 * reconnection (the project's gateway retries within 10 s), so a gateway past it is not slow.
 */
export const SILENT_FLOOR_MS = 2 * MAX_BIN_MS;

/**
 * How long a gateway whose last batch spanned `spanMs` (n·dt) may go unheard, ms. One that gathers
 * many bins into each batch (the contract allows up to 10,000) next publishes about a batch's span
 * later, so its wait is twice that span when it is longer than the floor's bin.
 */
export function silentAfterMs(spanMs: number, floorMs = SILENT_FLOOR_MS): number {
  return Math.max(floorMs, 2 * spanMs);
}

/** A gateway falling silent (`silentSince`: when it was last heard, ms) or heard again (null). */
export interface SilenceChange {
  bench: string;
  gateway: string;
  silentSince: number | null;
}

interface Gateway {
  bench: string;
  /** Its latest status says online (and it is not revoked). */
  online: boolean;
  heardAt: number;
  /** The span of its latest batch, ms (0 before one). */
  spanMs: number;
  silent: boolean;
}

export class SilenceTracker {
  private readonly gateways = new Map<string, Gateway>();

  /**
   * `listeningSince`: when the server began to listen (ms). Before that it could hear nothing, so a
   * gateway is judged only on the time since: a restart does not call every gateway silent at once.
   */
  constructor(
    private readonly listeningSince: number,
    private readonly floorMs = SILENT_FLOOR_MS,
  ) {}

  /** What the server found stored when it started: an online gateway, when it was last heard (ms) and its latest span. */
  know(gateway: string, bench: string, heardAt: number, spanMs = 0): void {
    if (!this.gateways.has(gateway)) this.gateways.set(gateway, { bench, online: true, heardAt, spanMs, silent: false });
  }

  /**
   * Something the gateway published: a batch (stored, repeated or rejected; `spanMs` its n·dt when
   * it could be read) or an ack. Returns the change to announce when this ends a silence.
   */
  heard(gateway: string, bench: string, at: number, spanMs?: number): SilenceChange | null {
    const g = this.gateways.get(gateway);
    if (!g) {
      this.gateways.set(gateway, { bench, online: false, heardAt: at, spanMs: spanMs ?? 0, silent: false });
      return null;
    }
    g.bench = bench;
    g.heardAt = Math.max(g.heardAt, at);
    if (spanMs !== undefined) g.spanMs = spanMs;
    if (!g.silent) return null;
    g.silent = false;
    return { bench, gateway, silentSince: null };
  }

  /** Its status (its last will says offline). Ends a silence without a change: the status is announced as it is. */
  status(gateway: string, bench: string, online: boolean, at: number): void {
    const g = this.gateways.get(gateway);
    if (!g) {
      this.gateways.set(gateway, { bench, online, heardAt: at, spanMs: 0, silent: false });
      return;
    }
    Object.assign(g, { bench, online, heardAt: Math.max(g.heardAt, at), silent: false });
  }

  /** The gateway no longer connects (revoked): its silence means nothing. */
  forget(gateway: string): void {
    this.gateways.delete(gateway);
  }

  /** The online gateways that have gone unheard too long by `now`, each once per silence. */
  due(now: number): SilenceChange[] {
    const changes: SilenceChange[] = [];
    for (const [gateway, g] of this.gateways) {
      if (!g.online || g.silent) continue;
      if (now - Math.max(g.heardAt, this.listeningSince) <= silentAfterMs(g.spanMs, this.floorMs)) continue;
      g.silent = true;
      changes.push({ bench: g.bench, gateway, silentSince: g.heardAt });
    }
    return changes;
  }

  /** When a silent gateway was last heard (ms), or null when it is not silent. */
  silentSince(gateway: string): number | null {
    const g = this.gateways.get(gateway);
    return g?.silent ? g.heardAt : null;
  }
}
