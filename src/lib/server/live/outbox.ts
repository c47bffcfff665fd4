// One client's outgoing queue. The hub hands it each frame's messages, already serialised and
// framed once for all clients; a fast client with nothing waiting gets the prepared bytes in ONE
// socket write, since on loopback the write call, not the bytes, is the cost (~12 µs each, half
// the server's CPU with 200 browsers before). A slow client (its socket buffer filling) waits, and
// what piles up meanwhile is coalesced (contiguous count messages of a gateway merge into one) and
// bounded: past the bound the oldest count messages are dropped and the client is told with a
// `dropped` message, so a stalled browser cannot grow the server's memory. While a resume replays,
// live frames are held (bounded the same way) and sent after it, less what it carried.
import type { CountsMessage, FeatureMessage, LiveMessage } from '../../live-messages.ts';
import { binsOf, coalesceCounts, countsOutside } from './coalesce.ts';

export interface Sink {
  readonly bufferedAmount: number;
  /** Sends one text message (a Buffer holds its UTF-8). */
  send(data: string | Buffer): void;
  /** Gathers the following sends into one write until `uncork`. */
  cork(): void;
  uncork(): void;
  /** Writes already-framed messages (ws-frame.ts) as they are; false if the socket is not open. */
  writeFramed(wire: Buffer): boolean;
}

/** A hub frame for every client of a bench: its messages, and the same as WebSocket frames. */
export interface PreparedFrame {
  items: Queued[];
  wire: Buffer;
}

export interface Queued {
  msg: LiveMessage | FeatureMessage;
  /** Serialised once per message for all clients; null after a merge. */
  data: string | Buffer | null;
  bytes: number;
}

/** Socket buffer above which we stop writing and let messages wait (bytes). */
export const HIGH_WATER_BYTES = 256 * 1024;
/** Most waiting messages per client, and most waiting bytes, before the oldest counts are dropped. */
export const MAX_QUEUED_MESSAGES = 512;
export const MAX_QUEUED_BYTES = 2 * 1024 * 1024;
/** While a client is behind, retry this often (ms): a few coalesced frames a second. */
export const RETRY_MS = 250;

export class Outbox {
  private queue: Queued[] = [];
  private bytes = 0;
  private dropped: { messages: number; from: number; to: number } | null = null;
  private retry: NodeJS.Timeout | null = null;
  private immediate: NodeJS.Immediate | null = null;
  private closed = false;
  /** Live frames that arrive while a resume replays, kept for after it (null when not holding). */
  private held: Queued[] | null = null;
  private heldBytes = 0;

  constructor(
    private readonly sink: Sink,
    private readonly bench: string,
  ) {}

  /** Queues one message and sends it on the next turn of the event loop (replies to this client). */
  push(item: Queued): void {
    if (!this.enqueue([item]) || this.immediate || this.retry) return;
    this.immediate = setImmediate(() => {
      this.immediate = null;
      this.flush();
    });
  }

  /** Sends a frame's messages in one write: as prepared when nothing waits, else through the queue. */
  pushFrame(frame: PreparedFrame): void {
    if (this.closed) return;
    if (this.held) {
      for (const q of frame.items) {
        this.held.push(q);
        this.heldBytes += q.bytes;
      }
      this.heldBytes = this.bound(this.held, this.heldBytes);
      return;
    }
    if (!this.queue.length && !this.dropped && !this.retry && this.sink.bufferedAmount <= HIGH_WATER_BYTES && this.sink.writeFramed(frame.wire)) return;
    if (this.enqueue(frame.items) && !this.retry) this.flush();
  }

  /** From now on live frames wait (a resume is replaying what the client missed). */
  hold(): void {
    this.held ??= [];
  }

  /**
   * Sends the held frames after the replay, less what the replay already carried: `replayed` holds,
   * per gateway, the sorted [t0, t1) spans of the batches it sent. A held message loses the bins
   * inside them (it may be several batches merged) and keeps the rest, even bins older than the
   * replay's last one (a batch committed behind the replay's cursor).
   */
  release(replayed: ReadonlyMap<string, readonly (readonly [number, number])[]>): void {
    const held = this.held ?? [];
    this.held = null;
    this.heldBytes = 0;
    const rest: Queued[] = [];
    for (const q of held) {
      if (q.msg.type !== 'counts') {
        rest.push(q);
        continue;
      }
      const m = q.msg as CountsMessage;
      const parts = countsOutside(m, replayed.get(m.gateway) ?? []);
      if (parts[0] === m) rest.push(q);
      else for (const part of parts) rest.push({ msg: part, data: null, bytes: Math.round((q.bytes * binsOf(part)) / binsOf(m)) });
    }
    if (rest.length && this.enqueue(rest) && !this.retry) this.flush();
  }

  close(): void {
    this.closed = true;
    this.held = null;
    this.queue = [];
    this.bytes = 0;
    if (this.retry) clearTimeout(this.retry);
    if (this.immediate) clearImmediate(this.immediate);
  }

  /** Waiting messages (for tests and the benchmark). */
  get size(): number {
    return this.queue.length;
  }

  private enqueue(items: Queued[]): boolean {
    if (this.closed) return false;
    for (const item of items) {
      this.queue.push(item);
      this.bytes += item.bytes;
    }
    this.bytes = this.bound(this.queue, this.bytes);
    return true;
  }

  /**
   * Keeps a list within MAX_QUEUED_MESSAGES and MAX_QUEUED_BYTES: first by merging contiguous count
   * messages (a replay of many small batches fits again), then by dropping the oldest counts.
   * Returns the list's bytes afterwards.
   */
  private bound(list: Queued[], bytes: number): number {
    if (list.length <= MAX_QUEUED_MESSAGES && bytes <= MAX_QUEUED_BYTES) return bytes;
    const merged = coalesceCounts(list, (q) => q.msg, (a, b, msg) => ({ msg, data: null, bytes: a.bytes + b.bytes }));
    list.splice(0, list.length, ...merged);
    while (list.length > MAX_QUEUED_MESSAGES || bytes > MAX_QUEUED_BYTES) {
      let i = list.findIndex((q) => q.msg.type === 'counts');
      if (i < 0) i = 0;
      const [gone] = list.splice(i, 1);
      bytes -= gone!.bytes;
      if (gone!.msg.type === 'counts') {
        const m = gone!.msg as CountsMessage;
        const end = m.t0 + binsOf(m) * m.dt;
        this.dropped = this.dropped
          ? { messages: this.dropped.messages + 1, from: Math.min(this.dropped.from, m.t0), to: Math.max(this.dropped.to, end) }
          : { messages: 1, from: m.t0, to: end };
      }
    }
    return bytes;
  }

  private later(): void {
    this.retry ??= setTimeout(() => {
      this.retry = null;
      this.flush();
    }, RETRY_MS);
  }

  private flush(): void {
    if (this.closed || (!this.queue.length && !this.dropped)) return;
    if (this.sink.bufferedAmount > HIGH_WATER_BYTES) return this.later();
    this.queue = coalesceCounts(this.queue, (q) => q.msg, (a, b, merged) => ({ msg: merged, data: null, bytes: a.bytes + b.bytes }));
    this.sink.cork();
    try {
      if (this.dropped) {
        this.sink.send(JSON.stringify({ type: 'dropped', bench: this.bench, ...this.dropped }));
        this.dropped = null;
      }
      while (this.queue.length) {
        if (this.sink.bufferedAmount > HIGH_WATER_BYTES) return this.later();
        const q = this.queue.shift()!;
        this.bytes -= q.bytes;
        this.sink.send(q.data ?? JSON.stringify(q.msg));
      }
    } finally {
      this.sink.uncork();
    }
  }
}
