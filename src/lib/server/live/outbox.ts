// One client's outgoing queue. A fast client gets each message at once; a slow one (its socket
// buffer filling) waits, and what piles up meanwhile is coalesced (contiguous count messages of a
// gateway merge into one) and bounded: past the bound the oldest count messages are dropped and
// the client is told with a `dropped` message, so a stalled browser cannot grow the server's memory.
import type { CountsMessage, FeatureMessage, LiveMessage } from '../../live-messages.ts';

export interface Sink {
  readonly bufferedAmount: number;
  send(text: string): void;
}

export interface Queued {
  msg: LiveMessage | FeatureMessage;
  /** Serialised once per message for all clients; absent after a merge. */
  text: string | null;
  bytes: number;
}

/** Socket buffer above which we stop writing and let messages wait (bytes). */
export const HIGH_WATER_BYTES = 256 * 1024;
/** Most waiting messages per client, and most waiting bytes, before the oldest counts are dropped. */
export const MAX_QUEUED_MESSAGES = 512;
export const MAX_QUEUED_BYTES = 2 * 1024 * 1024;
/** While a client is behind, retry this often (ms): a few coalesced frames a second. */
export const RETRY_MS = 250;
/** Largest merged count message, in bins per channel. */
const MAX_MERGED_BINS = 10_000;

function binsOf(m: CountsMessage): number {
  const first = Object.values(m.ch)[0];
  return first ? first.length : 0;
}

function canMerge(a: CountsMessage, b: CountsMessage): boolean {
  if (a.gateway !== b.gateway || a.dt !== b.dt || !!a.x !== !!b.x || !!a.cc !== !!b.cc) return false;
  if (a.t0 + binsOf(a) * a.dt !== b.t0 || binsOf(a) + binsOf(b) > MAX_MERGED_BINS) return false;
  const ka = Object.keys(a.ch);
  const kb = Object.keys(b.ch);
  return ka.length === kb.length && ka.every((k) => k in b.ch);
}

function merge(a: CountsMessage, b: CountsMessage): CountsMessage {
  const ch: Record<string, number[]> = {};
  for (const k of Object.keys(a.ch)) ch[k] = a.ch[k]!.concat(b.ch[k]!);
  const out: CountsMessage = { ...a, ch };
  if (a.x && b.x) out.x = a.x.concat(b.x);
  if (a.cc && b.cc) out.cc = a.cc.concat(b.cc);
  return out;
}

export class Outbox {
  private queue: Queued[] = [];
  private bytes = 0;
  private dropped: { messages: number; from: number; to: number } | null = null;
  private scheduled: NodeJS.Immediate | NodeJS.Timeout | null = null;
  private closed = false;

  constructor(
    private readonly sink: Sink,
    private readonly bench: string,
  ) {}

  push(item: Queued): void {
    if (this.closed) return;
    this.queue.push(item);
    this.bytes += item.bytes;
    this.enforceBounds();
    this.schedule(false);
  }

  close(): void {
    this.closed = true;
    this.queue = [];
    this.bytes = 0;
    if (this.scheduled) clearTimeout(this.scheduled as NodeJS.Timeout);
  }

  /** Waiting messages (for tests and the benchmark). */
  get size(): number {
    return this.queue.length;
  }

  private enforceBounds(): void {
    while (this.queue.length > MAX_QUEUED_MESSAGES || this.bytes > MAX_QUEUED_BYTES) {
      let i = this.queue.findIndex((q) => q.msg.type === 'counts');
      if (i < 0) i = 0;
      const [gone] = this.queue.splice(i, 1);
      this.bytes -= gone!.bytes;
      if (gone!.msg.type === 'counts') {
        const m = gone!.msg as CountsMessage;
        const end = m.t0 + binsOf(m) * m.dt;
        this.dropped = this.dropped
          ? { messages: this.dropped.messages + 1, from: Math.min(this.dropped.from, m.t0), to: Math.max(this.dropped.to, end) }
          : { messages: 1, from: m.t0, to: end };
      }
    }
  }

  private schedule(later: boolean): void {
    if (this.scheduled || this.closed) return;
    const run = () => {
      this.scheduled = null;
      this.flush();
    };
    this.scheduled = later ? setTimeout(run, RETRY_MS) : setImmediate(run);
  }

  private coalesce(): void {
    if (this.queue.length < 2) return;
    const out: Queued[] = [];
    for (const q of this.queue) {
      const prev = out[out.length - 1];
      if (prev && prev.msg.type === 'counts' && q.msg.type === 'counts' && canMerge(prev.msg as CountsMessage, q.msg as CountsMessage)) {
        out[out.length - 1] = { msg: merge(prev.msg as CountsMessage, q.msg as CountsMessage), text: null, bytes: prev.bytes + q.bytes };
      } else out.push(q);
    }
    this.queue = out;
  }

  private flush(): void {
    if (this.closed) return;
    if (this.sink.bufferedAmount > HIGH_WATER_BYTES) return this.schedule(true);
    this.coalesce();
    if (this.dropped) {
      this.sink.send(JSON.stringify({ type: 'dropped', bench: this.bench, ...this.dropped }));
      this.dropped = null;
    }
    while (this.queue.length) {
      if (this.sink.bufferedAmount > HIGH_WATER_BYTES) return this.schedule(true);
      const q = this.queue.shift()!;
      this.bytes -= q.bytes;
      this.sink.send(q.text ?? JSON.stringify(q.msg));
    }
  }
}
