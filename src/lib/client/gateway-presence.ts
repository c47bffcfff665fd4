// Which of a bench's gateways are online, as the bench page learns it: the server's render to start
// with, then every `status` message on the live socket (a gateway's own announcement, or its last
// will when it drops or is revoked). The hub pushes a status only when one arrives, so one that
// came while the socket was down (or before it first opened) would be missed: on every opening the
// gateways are read again. One store per bench, shared by the header and the live view.
import { statusMessageSchema } from '../live-messages.ts';
import { fetchGatewayOnline } from './api.ts';
import { liveSocket } from './live-socket.ts';

export interface GatewayPresence {
  id: string;
  online: boolean;
}

/** The list with one gateway's state set; the same list when nothing changes. A gateway not yet listed (newly assigned) is added. */
export function withGatewayState(list: readonly GatewayPresence[], id: string, online: boolean): readonly GatewayPresence[] {
  const i = list.findIndex((g) => g.id === id);
  if (i < 0) return [...list, { id, online }];
  if (list[i]!.online === online) return list;
  return list.map((g, j) => (j === i ? { id, online } : g));
}

class PresenceStore {
  private list: readonly GatewayPresence[];
  private readonly listeners = new Set<() => void>();
  /** Status messages seen per gateway: a re-read answers for the moment it was asked, so a message that came meanwhile is newer. */
  private readonly seen = new Map<string, number>();
  private detach: (() => void) | null = null;
  private reading: AbortController | null = null;

  constructor(
    private readonly bench: string,
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
        stores.delete(this.bench);
      }
    };
  };

  private set(id: string, online: boolean): void {
    const next = withGatewayState(this.list, id, online);
    if (next === this.list) return;
    this.list = next;
    for (const l of this.listeners) l();
  }

  private attach(): void {
    const socket = liveSocket(this.bench);
    const off = socket.subscribe((m) => {
      if (m.type !== 'status') return;
      const s = statusMessageSchema.safeParse(m);
      if (!s.success) return;
      this.seen.set(s.data.gateway, (this.seen.get(s.data.gateway) ?? 0) + 1);
      this.set(s.data.gateway, s.data.state === 'online');
    });
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
      fetchGatewayOnline(id, ctl.signal).then(
        (online) => {
          if (!ctl.signal.aborted && (this.seen.get(id) ?? 0) === before) this.set(id, online);
        },
        () => undefined,
      );
    }
  }
}

const stores = new Map<string, PresenceStore>();

/** The bench's store in this browser tab, made from `initial` (the server's render) on first use. */
export function gatewayPresence(bench: string, initial: readonly GatewayPresence[]): Pick<PresenceStore, 'get' | 'subscribe'> {
  let s = stores.get(bench);
  if (!s) {
    s = new PresenceStore(bench, initial);
    stores.set(bench, s);
  }
  return s;
}
