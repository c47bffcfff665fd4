// Which of a bench's gateways are online, as the bench page learns it: the server's render to start
// with, then every `status` message on the live socket (a gateway's own announcement, its last will
// when it drops or is revoked, or the server's word that it fell silent or spoke again). The hub
// pushes a status only when one arrives, so one that came while the socket was down (or before it
// first opened) would be missed: on every opening the gateways are read again. One store per bench, shared by the header and the live view. The lab
// overview follows its benches the same way, each store fed by one status-only socket for all of
// them (`feed`), since a bench's own socket would stream every count to a summary card; that socket
// begins with a `presence` message per bench, so its stores read nothing (a read per gateway on a
// lab of many would queue the page's own requests behind them).
import { presenceMessageSchema, statusMessageSchema } from '../live-messages.ts';
import { fetchGatewayPresence } from './api.ts';
import { liveSocket, statusSocket, type SharedSocket } from './live-socket.ts';

export interface GatewayPresence {
  id: string;
  online: boolean;
  /** Its status says online, but the server has heard nothing from it for too long: when it last did, ms since the epoch. */
  silentSince?: number;
}

/** The list with one gateway's state set; the same list when nothing changes. A gateway not yet listed (newly assigned) is added. */
export function withGatewayState(list: readonly GatewayPresence[], next: GatewayPresence): readonly GatewayPresence[] {
  const i = list.findIndex((g) => g.id === next.id);
  if (i < 0) return [...list, next];
  const g = list[i]!;
  if (g.online === next.online && g.silentSince === next.silentSince) return list;
  return list.map((h, j) => (j === i ? next : h));
}

/** One gateway's presence from what a status message or a health read says. */
function presence(id: string, online: boolean, silentSince: number | null | undefined): GatewayPresence {
  return silentSince == null ? { id, online } : { id, online, silentSince };
}

/** Where status comes from: the bench's own live socket, or the status socket of a page's benches. */
export type PresenceFeed = { kind: 'bench' } | { kind: 'status' };

export const BENCH_FEED: PresenceFeed = { kind: 'bench' };
export const STATUS_FEED: PresenceFeed = { kind: 'status' };

function socketOf(bench: string, feed: PresenceFeed): SharedSocket {
  return feed.kind === 'bench' ? liveSocket(bench) : statusSocket();
}

class PresenceStore {
  private list: readonly GatewayPresence[];
  private readonly listeners = new Set<() => void>();
  /** Status messages seen per gateway: a re-read answers for the moment it was asked, so a message that came meanwhile is newer. */
  private readonly seen = new Map<string, number>();
  private detach: (() => void) | null = null;
  private reading: AbortController | null = null;

  constructor(
    private readonly key: string,
    private readonly bench: string,
    private readonly feed: PresenceFeed,
    initial: readonly GatewayPresence[],
  ) {
    this.list = initial;
  }

  get = (): readonly GatewayPresence[] => this.list;

  subscribe = (listener: () => void): (() => void) => {
    this.listeners.add(listener);
    if (!this.detach) this.attach();
    return () => {
      this.listeners.delete(listener);
      if (this.listeners.size === 0) {
        this.detach?.();
        this.detach = null;
        this.reading?.abort();
        stores.delete(this.key);
      }
    };
  };

  private set(g: GatewayPresence): void {
    const next = withGatewayState(this.list, g);
    if (next === this.list) return;
    this.list = next;
    for (const l of this.listeners) l();
  }

  private attach(): void {
    const socket = socketOf(this.bench, this.feed);
    const off = socket.subscribe((m) => {
      if (m.type === 'presence') {
        const p = presenceMessageSchema.safeParse(m);
        if (p.success && p.data.bench === this.bench) for (const g of p.data.gateways) this.set(presence(g.id, g.online, g.silentSince));
        return;
      }
      if (m.type !== 'status') return;
      const s = statusMessageSchema.safeParse(m);
      // A status socket carries every bench of the page.
      if (!s.success || s.data.bench !== this.bench) return;
      this.seen.set(s.data.gateway, (this.seen.get(s.data.gateway) ?? 0) + 1);
      this.set(presence(s.data.gateway, s.data.state === 'online', s.data.silentSince));
    });
    if (this.feed.kind === 'status') {
      this.detach = off;
      return;
    }
    let wasOpen = false;
    const offState = socket.onState((st) => {
      const open = st.status === 'open';
      if (open && !wasOpen) this.reread();
      wasOpen = open;
    });
    this.detach = () => {
      off();
      offState();
    };
  }

  private reread(): void {
    this.reading?.abort();
    const ctl = new AbortController();
    this.reading = ctl;
    for (const { id } of this.list) {
      const before = this.seen.get(id) ?? 0;
      // A failed read keeps what the page knows: the next status message or opening corrects it.
      fetchGatewayPresence(id, ctl.signal).then(
        (p) => {
          if (!ctl.signal.aborted && (this.seen.get(id) ?? 0) === before) this.set(presence(id, p.online, p.silentSince));
        },
        () => undefined,
      );
    }
  }
}

const stores = new Map<string, PresenceStore>();

/** The bench's store in this browser tab, made from `initial` (the server's render) on first use. */
export function gatewayPresence(bench: string, initial: readonly GatewayPresence[], feed: PresenceFeed = BENCH_FEED): Pick<PresenceStore, 'get' | 'subscribe'> {
  const key = `${feed.kind} ${bench}`;
  let s = stores.get(key);
  if (!s) {
    s = new PresenceStore(key, bench, feed, initial);
    stores.set(key, s);
  }
  return s;
}
