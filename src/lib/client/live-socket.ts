// The browser's one live socket per bench. Islands subscribe; the module owns the connection,
// reconnects with exponential back-off, and on each reconnect (or after the server says it dropped
// messages) asks for what was missed with `resume`, from the end of the last bins it had. The lab
// overview uses one status-only socket for every bench the user may read instead (`statusSocket`):
// it carries no counts, so it has nothing to resume.
import type { CountsMessage, FeatureMessage, LiveMessage } from '../live-messages.ts';
import { LIVE_PATH } from '../live-messages.ts';

export interface LiveSocketState {
  status: 'connecting' | 'open' | 'closed';
  /** Whether the socket was open at least once (a later drop is a lost connection, not a start). */
  everOpen: boolean;
  /** When the next reconnection attempt is due, ms since the epoch. */
  retryAt: number | null;
}

export type LiveListener = (m: LiveMessage | FeatureMessage) => void;

/** Back-off between reconnection attempts, ms: doubles from the first to the last, with ±20 % jitter. */
const FIRST_RETRY_MS = 500;
const MAX_RETRY_MS = 15_000;
/**
 * A resume reaches back at most this far (ms): the live view shows the last 10 minutes, and a
 * gateway silent for hours must not make every reconnect replay hours of the others' batches.
 */
const RESUME_WINDOW_MS = 10 * 60_000;

function endOf(m: CountsMessage): number {
  return m.t0 + (Object.values(m.ch)[0]?.length ?? 0) * m.dt;
}

class LiveSocket {
  state: LiveSocketState = { status: 'connecting', everOpen: false, retryAt: null };
  private ws: WebSocket | null = null;
  private listeners = new Set<LiveListener>();
  private stateListeners = new Set<(s: LiveSocketState) => void>();
  private retryMs = FIRST_RETRY_MS;
  private timer: ReturnType<typeof setTimeout> | null = null;
  /** End of the newest bins seen, per gateway (ms): where a resume starts and what a replay may skip. */
  private lastEnd = new Map<string, number>();
  /** While a resume replays, bins ending at or before these ends are already known. */
  private replayKnown: Map<string, number> | null = null;

  /** `key`: its entry in `sockets`; `query`: what the live path's URL asks for. */
  constructor(
    private readonly key: string,
    private readonly query: string,
  ) {}

  subscribe(listener: LiveListener): () => void {
    this.listeners.add(listener);
    if (!this.ws && !this.timer) this.connect();
    return () => {
      this.listeners.delete(listener);
      if (this.listeners.size === 0) this.shutdown();
    };
  }

  onState(listener: (s: LiveSocketState) => void): () => void {
    this.stateListeners.add(listener);
    listener(this.state);
    return () => this.stateListeners.delete(listener);
  }

  private setState(patch: Partial<LiveSocketState>): void {
    this.state = { ...this.state, ...patch };
    for (const l of this.stateListeners) l(this.state);
  }

  private connect(): void {
    this.timer = null;
    const proto = location.protocol === 'https:' ? 'wss:' : 'ws:';
    const ws = new WebSocket(`${proto}//${location.host}${LIVE_PATH}?${this.query}`);
    this.ws = ws;
    this.setState({ status: 'connecting', retryAt: null });
    ws.onopen = () => {
      this.retryMs = FIRST_RETRY_MS;
      const wasOpen = this.state.everOpen;
      this.setState({ status: 'open', everOpen: true });
      if (wasOpen && this.lastEnd.size) this.resume(Math.max(Math.min(...this.lastEnd.values()), Date.now() - RESUME_WINDOW_MS), true);
    };
    ws.onmessage = (ev) => this.receive(ev.data);
    ws.onclose = () => {
      if (this.ws !== ws) return;
      this.ws = null;
      if (this.listeners.size === 0) return;
      const delay = this.retryMs * (0.8 + Math.random() * 0.4);
      this.retryMs = Math.min(MAX_RETRY_MS, this.retryMs * 2);
      this.setState({ status: 'closed', retryAt: Date.now() + delay });
      this.timer = setTimeout(() => this.connect(), delay);
    };
  }

  /**
   * `skipKnown`: after a reconnect, bins up to each gateway's last end were seen; after a drop they
   * were not. A drop during a reconnect's replay keeps that replay's filter: the server runs the
   * second resume after the first.
   */
  private resume(since: number, skipKnown: boolean): void {
    if (skipKnown) this.replayKnown = new Map(this.lastEnd);
    this.ws?.send(JSON.stringify({ type: 'resume', since }));
  }

  private receive(data: unknown): void {
    let m: LiveMessage | FeatureMessage;
    try {
      m = JSON.parse(String(data)) as LiveMessage | FeatureMessage;
    } catch {
      return;
    }
    if (m.type === 'counts') {
      const c = m as CountsMessage;
      const end = endOf(c);
      if (this.replayKnown && end <= (this.replayKnown.get(c.gateway) ?? -Infinity)) return;
      this.lastEnd.set(c.gateway, Math.max(end, this.lastEnd.get(c.gateway) ?? 0));
    } else if (m.type === 'resumed') {
      this.replayKnown = null;
    } else if (m.type === 'dropped') {
      this.resume(Math.max((m as Extract<LiveMessage, { type: 'dropped' }>).from, Date.now() - RESUME_WINDOW_MS), false);
    }
    for (const l of this.listeners) l(m);
  }

  private shutdown(): void {
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    const ws = this.ws;
    this.ws = null;
    ws?.close();
    sockets.delete(this.key);
  }
}

const sockets = new Map<string, LiveSocket>();

export type SharedSocket = Pick<LiveSocket, 'subscribe' | 'onState' | 'state'>;

function shared(key: string, query: () => string): SharedSocket {
  let s = sockets.get(key);
  if (!s) {
    s = new LiveSocket(key, query());
    sockets.set(key, s);
  }
  return s;
}

/** The shared live socket of a bench; it connects on the first subscriber and closes after the last leaves. */
export function liveSocket(bench: string): SharedSocket {
  return shared(bench, () => new URLSearchParams({ bench }).toString());
}

/**
 * One shared socket carrying only the `status`, `alarm` and `figures` messages of every bench the
 * user may read: one socket whatever their number, where naming them would make the URL grow with it.
 */
export function statusSocket(): SharedSocket {
  // A space never occurs in a bench id, so no bench's own socket has this key.
  return shared('status all', () => 'watch=status&all=1');
}
