// The WebSocket hub behind `GET /api/v1/live?bench=`: authenticates the upgrade with the same check
// as the middleware, keeps each bench's clients, pushes what the fan-out emits, answers `resume`,
// and terminates sockets that stop answering pings. `?watch=status&bench=a&bench=b` is a lighter
// socket for pages that show several benches: only the gateways' `status`, the `alarm` and the
// live `figures` messages of the benches named, none of the counts or fits a bench's own socket
// streams. `?watch=status&all=1` follows every bench the user may read (the lab overview, whose
// benches can be more than a URL should name): it begins with a `presence` message per bench, so
// its page need not ask each gateway whether it is online, and takes up a bench made after it
// opened at that bench's first message, with the bench's own `presence` first.
//
// Push in frames: what the fan-out emits for a bench waits at most FRAME_MS (frame-period.ts; a
// late batch not at all), is coalesced (contiguous counts of a gateway merge), serialised and
// framed ONCE (ws-frame.ts) and handed to every client of the bench, which writes the whole frame
// with one socket write. With 200 browsers and 200 batches/s the per-message, per-client send was
// half the server's CPU and put it behind (DEVELOPERS.md, "Ingest benchmark").
import type http from 'node:http';
import type { Socket } from 'node:net';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import { benchIdSchema } from '../../contract/wire.ts';
import { clientMessageSchema, type FeatureMessage, type LiveMessage } from '../../live-messages.ts';
import { authenticate } from '../auth/authenticate.ts';
import type { SessionUser } from '../auth/lucia.ts';
import { originHost } from '../http/origin.ts';
import type { Fanout } from '../ingest/fanout.ts';
import { presenceOfBenches } from '../gateway-presence.ts';
import { canReadBench, readableBenchIds } from './access.ts';
import { binsOf, coalesceCounts } from './coalesce.ts';
import { joinSpans } from '../../spans.ts';
import { frameDelay } from './frame-period.ts';
import { HIGH_WATER_BYTES, MAX_QUEUED_BYTES, Outbox, type PreparedFrame, type Queued, type Sink } from './outbox.ts';
import { countsPage, type ResumeCursor } from './resume.ts';
import { traceStage } from './trace.ts';
import { textFrames } from './ws-frame.ts';

/** Ping period; a socket that has not answered the previous ping by the next one is terminated (ms). */
const HEARTBEAT_MS = 30_000;
/** Largest client message accepted (bytes): clients only send small control messages. */
const MAX_CLIENT_MESSAGE_BYTES = 4 * 1024;
/**
 * How far back a resume reaches (ms). Pages are paced by the client's socket, so the bound is on
 * the database work a client can ask for; an older `since` starts here and the answer says
 * `complete: false` (the history view reads further back).
 */
const RESUME_MAX_AGE_MS = 24 * 3_600_000;
/** Bytes of one replay page at most: half a client's queue bound, so a page never overflows it. */
const RESUME_PAGE_BYTES = MAX_QUEUED_BYTES / 2;
/** How often a replay looks whether its last page has left (ms). */
const DRAIN_POLL_MS = 20;
/** Most benches one status socket may watch: the URL stays short, and a lab has far fewer. */
const MAX_WATCHED_BENCHES = 100;

interface LiveClient {
  ws: WebSocket;
  bench: string;
  user: SessionUser;
  outbox: Outbox;
  alive: boolean;
  resuming: boolean;
  /** A resume asked while another replays: the earliest `since` asked, run right after it. */
  nextResume: number | null;
}

/** A socket that follows only gateway status, of one or several benches. */
interface StatusWatcher {
  ws: WebSocket;
  alive: boolean;
  /** The benches it is told of: it is in each one's set in `watchers`. */
  benches: Set<string>;
  /** An `all=1` socket's user, and the benches made since it opened that the user may not read; null for one that named its benches. */
  all: { user: SessionUser; refused: Set<string> } | null;
  /** Reads under way for it (presence, access); while any is, what is published for it waits in `held`. */
  reading: number;
  /** Messages held while presence is read, sent after it since they are newer. */
  held: { bench: string; data: Buffer }[];
}

function refuse(socket: Duplex, status: number, reason: string, error: string): void {
  const body = JSON.stringify({ error });
  socket.end(`HTTP/1.1 ${status} ${reason}\r\nContent-Type: application/json\r\nContent-Length: ${Buffer.byteLength(body)}\r\nConnection: close\r\n\r\n${body}`);
}

export class LiveHub {
  private readonly wss = new WebSocketServer({ noServer: true, maxPayload: MAX_CLIENT_MESSAGE_BYTES, perMessageDeflate: false });
  private readonly benches = new Map<string, Set<LiveClient>>();
  /** Status-only sockets by bench watched; one socket is in the set of each bench it names. */
  private readonly watchers = new Map<string, Set<StatusWatcher>>();
  /** The `all=1` sockets, also in `watchers` under each bench they follow. */
  private readonly allWatchers = new Set<StatusWatcher>();
  private readonly heartbeat: NodeJS.Timeout;
  private readonly unsubscribe: () => void;
  /** Messages of the coming frame, per bench, in emission order. */
  private pending = new Map<string, (LiveMessage | FeatureMessage)[]>();
  private frameTimer: NodeJS.Timeout | null = null;
  private frameImmediate: NodeJS.Immediate | null = null;
  private lastFrameAt = -Infinity;

  constructor(fanout: Fanout) {
    this.unsubscribe = fanout.subscribe((benchId, message, late) => this.publish(benchId, message, late));
    this.heartbeat = setInterval(() => this.beat(), HEARTBEAT_MS);
    this.heartbeat.unref();
  }

  /**
   * Sends a message to every client watching a bench in the next frame (fits, alarms and the like
   * call this too); a `late` one brings that frame forward to now (frame-period.ts).
   */
  publish(benchId: string, message: LiveMessage | FeatureMessage, late = false): void {
    if (message.type === 'status' || message.type === 'alarm' || message.type === 'figures') this.tellWatchers(benchId, message);
    if (!this.benches.get(benchId)?.size) return;
    const list = this.pending.get(benchId);
    if (list) list.push(message);
    else this.pending.set(benchId, [message]);
    this.scheduleFrame(late);
  }

  private scheduleFrame(late: boolean): void {
    if (this.frameImmediate) return;
    if (this.frameTimer) {
      if (!late) return;
      clearTimeout(this.frameTimer);
      this.frameTimer = null;
    }
    const wait = frameDelay(this.lastFrameAt, performance.now(), late);
    // setImmediate, not 0 ms: every batch of the same COMMIT is emitted before it runs.
    if (wait <= 0) this.frameImmediate = setImmediate(() => this.frame());
    else this.frameTimer = setTimeout(() => this.frame(), wait);
  }

  private frame(): void {
    this.frameTimer = null;
    this.frameImmediate = null;
    this.lastFrameAt = performance.now();
    const pending = this.pending;
    this.pending = new Map();
    for (const [benchId, messages] of pending) {
      const clients = this.benches.get(benchId);
      if (!clients?.size) continue;
      const keys = () => messages.flatMap((m) => (m.type === 'counts' ? [`${m.gateway}/${m.t0}`] : []));
      traceStage('frame-start', keys);
      const items = coalesceCounts(messages, (m) => m, (_a, _b, merged) => merged).map((m) => this.queued(m));
      const frame: PreparedFrame = { items, wire: textFrames(items.map((q) => q.data)) };
      // All of a bench's clients in one go: handed out in slices of 50 per turn of the event loop,
      // the ingest's stages got faster but the later browsers waited longer, and publish → browser
      // did not improve (DEVELOPERS.md, "Ingest benchmark").
      for (const c of clients) c.outbox.pushFrame(frame);
      traceStage('frame-end', keys);
    }
  }

  /**
   * Status and alarms are rare (a gateway's connect, its last will, a silence; a rule's raise or
   * clear), figures come about once a second per bench, so a watcher gets them at once, outside
   * the frames: a bench with only watchers builds no frames. Each figures message supersedes the
   * last, so one is left out for a watcher whose socket is behind rather than queued.
   */
  private tellWatchers(benchId: string, message: LiveMessage | FeatureMessage): void {
    let newcomers: StatusWatcher[] | null = null;
    for (const w of this.allWatchers) if (!w.benches.has(benchId) && !w.all!.refused.has(benchId)) (newcomers ??= []).push(w);
    if (newcomers) this.follow(newcomers, benchId);
    const set = this.watchers.get(benchId);
    if (!set?.size) return;
    const data = Buffer.from(JSON.stringify(message));
    const skippable = message.type === 'figures';
    for (const w of set) {
      if (w.reading) w.held.push({ bench: benchId, data });
      else if (w.ws.readyState === w.ws.OPEN && !(skippable && w.ws.bufferedAmount > HIGH_WATER_BYTES)) w.ws.send(data, { binary: false });
    }
  }

  /** Sockets of a bench that receive its counts (status-only watchers are not counted). */
  clientCount(benchId?: string): number {
    if (benchId) return this.benches.get(benchId)?.size ?? 0;
    let n = 0;
    for (const set of this.benches.values()) n += set.size;
    return n;
  }

  /** The `upgrade` handler for LIVE_PATH. */
  readonly handleUpgrade = (req: http.IncomingMessage, socket: Duplex, head: Buffer): void => {
    // Nagle's algorithm holds small frames back for tens of ms (stack notes, TCP_NODELAY lesson).
    (socket as Socket).setNoDelay?.(true);
    void this.admit(req, socket, head).catch((err) => {
      console.error('[live] upgrade failed:', err);
      refuse(socket, 500, 'Internal Server Error', 'internal error');
    });
  };

  private async admit(req: http.IncomingMessage, socket: Duplex, head: Buffer): Promise<void> {
    const url = new URL(req.url ?? '/', 'http://localhost');
    const watch = url.searchParams.get('watch');
    if (watch !== null && watch !== 'status') return refuse(socket, 400, 'Bad Request', 'watch must be "status"');
    const all = url.searchParams.get('all');
    if (all !== null && (all !== '1' || !watch)) return refuse(socket, 400, 'Bad Request', 'all=1 goes with watch=status');
    const named = watch ? [...new Set(url.searchParams.getAll('bench'))] : [url.searchParams.get('bench') ?? ''];
    if (all !== null && named.length) return refuse(socket, 400, 'Bad Request', 'name benches or ask for all=1, not both');
    if (all === null && (named.length === 0 || named.length > MAX_WATCHED_BENCHES)) return refuse(socket, 400, 'Bad Request', `name 1 to ${MAX_WATCHED_BENCHES} benches, or all=1`);
    const ids = named.map((b) => benchIdSchema.safeParse(b));
    if (!ids.every((b) => b.success)) return refuse(socket, 400, 'Bad Request', 'bench must be a bench id');
    const benches = ids.map((b) => b.data!);
    const auth = await authenticate(req.headers);
    if (!auth.user) return refuse(socket, 401, 'Unauthorized', 'sign in or send a valid API token');
    // A cookie rides along with cross-site requests too: a cookie-authenticated socket must come from our own pages.
    if (auth.method === 'session') {
      const origin = req.headers.origin;
      if (!origin || originHost(origin) !== req.headers.host) return refuse(socket, 403, 'Forbidden', 'cross-site WebSocket refused');
    }
    for (const b of benches) if (!(await canReadBench(auth.user, b))) return refuse(socket, 403, 'Forbidden', 'you may not watch this bench');
    const user = auth.user;
    // Benches made later are taken up by `follow`, at their first message.
    const watched = all === null ? benches : await readableBenchIds(user);
    this.wss.handleUpgrade(req, socket, head, (ws) => (watch ? this.attachWatcher(ws, watched, all === null ? null : user) : this.attach(ws, socket, benches[0]!, user)));
  }

  /** `allOf`: the user of an `all=1` socket, which gets presence first and follows benches made later. */
  private attachWatcher(ws: WebSocket, benches: string[], allOf: SessionUser | null): void {
    const watcher: StatusWatcher = { ws, alive: true, benches: new Set(), all: allOf && { user: allOf, refused: new Set() }, reading: 0, held: [] };
    for (const b of benches) this.join(watcher, b);
    if (allOf) {
      this.allWatchers.add(watcher);
      // Read after joining the sets: a status published meanwhile is held, and sent after, being newer.
      watcher.reading++;
      void this.sendPresence([watcher], benches);
    }
    ws.on('pong', () => (watcher.alive = true));
    // Nothing to resume: the page re-reads its gateways' state whenever the socket opens.
    ws.on('message', () => ws.send(JSON.stringify({ type: 'error', error: 'a status socket takes no messages' })));
    ws.on('close', () => {
      this.allWatchers.delete(watcher);
      for (const b of watcher.benches) this.leave(watcher, b);
    });
    ws.on('error', () => ws.terminate());
  }

  private join(watcher: StatusWatcher, bench: string): void {
    watcher.benches.add(bench);
    const set = this.watchers.get(bench) ?? new Set();
    this.watchers.set(bench, set.add(watcher));
  }

  private leave(watcher: StatusWatcher, bench: string): void {
    watcher.benches.delete(bench);
    const set = this.watchers.get(bench);
    set?.delete(watcher);
    if (set && !set.size) this.watchers.delete(bench);
  }

  /**
   * A bench the `all=1` sockets did not know at their opening (made since): each joins it at once,
   * so this message and the next are held, and, if its user may read it, gets its `presence`
   * before them, as for the benches it opened with; otherwise they are dropped and the bench is
   * never looked at again for it. The bench's gateways are read once for all these sockets.
   */
  private follow(sockets: StatusWatcher[], bench: string): void {
    for (const w of sockets) {
      this.join(w, bench);
      w.reading++;
    }
    void (async () => {
      let allowed: boolean[];
      try {
        allowed = await Promise.all(sockets.map((w) => canReadBench(w.all!.user, bench)));
      } catch (err) {
        console.warn('[live] access check failed:', err instanceof Error ? err.message : err);
        // The page's socket reconnects and starts again with every bench it may read.
        for (const w of sockets) {
          w.ws.close(1011, 'access check failed');
          this.release(w);
        }
        return;
      }
      for (const [i, w] of sockets.entries()) {
        if (allowed[i]) continue;
        this.leave(w, bench);
        w.all!.refused.add(bench);
        w.held = w.held.filter((h) => h.bench !== bench);
        this.release(w);
      }
      await this.sendPresence(sockets.filter((_, i) => allowed[i]), [bench]);
    })();
  }

  /** Reads each bench's gateways once and sends them to every socket given, then what each held meanwhile. */
  private async sendPresence(sockets: StatusWatcher[], benches: string[]): Promise<void> {
    if (!sockets.length) return;
    try {
      const data = [...(await presenceOfBenches(benches))].map(([bench, gateways]) => JSON.stringify({ type: 'presence', bench, gateways } satisfies LiveMessage));
      for (const { ws } of sockets) for (const d of data) if (ws.readyState === ws.OPEN) ws.send(d);
    } catch (err) {
      console.warn('[live] presence read failed:', err instanceof Error ? err.message : err);
      for (const { ws } of sockets) ws.close(1011, 'presence read failed');
    }
    for (const w of sockets) this.release(w);
  }

  /** One read for the socket is through; after the last, what it held goes out. */
  private release(watcher: StatusWatcher): void {
    if (--watcher.reading > 0) return;
    const { ws, held } = watcher;
    watcher.held = [];
    for (const { data } of held) if (ws.readyState === ws.OPEN) ws.send(data, { binary: false });
  }

  private attach(ws: WebSocket, socket: Duplex, bench: string, user: SessionUser): void {
    // ws writes to the socket we handed it, so corking it gathers a frame's messages into one write.
    // Prepared frames go to the socket directly: the server negotiates no extension (no compression),
    // so ws's sender keeps no state between frames that a whole frame written beside it could break.
    const sink: Sink = {
      get bufferedAmount() {
        return ws.bufferedAmount;
      },
      send: (data) => ws.send(data, { binary: false }),
      cork: () => socket.cork(),
      uncork: () => socket.uncork(),
      writeFramed: (wire) => {
        if (ws.readyState !== ws.OPEN) return false;
        socket.write(wire);
        return true;
      },
    };
    const client: LiveClient = { ws, bench, user, outbox: new Outbox(sink, bench), alive: true, resuming: false, nextResume: null };
    const set = this.benches.get(bench) ?? new Set();
    set.add(client);
    this.benches.set(bench, set);
    ws.on('pong', () => (client.alive = true));
    ws.on('message', (data, isBinary) => void this.onClientMessage(client, data, isBinary));
    ws.on('close', () => {
      client.outbox.close();
      set.delete(client);
      if (!set.size) this.benches.delete(bench);
    });
    ws.on('error', () => ws.terminate());
  }

  private async onClientMessage(client: LiveClient, data: unknown, isBinary: boolean): Promise<void> {
    let parsed: unknown;
    try {
      parsed = isBinary ? null : JSON.parse(String(data));
    } catch {
      parsed = null;
    }
    const msg = clientMessageSchema.safeParse(parsed);
    if (!msg.success) {
      client.outbox.push(this.queued({ type: 'error', error: 'unknown message; expected {"type":"resume","since":<ms>}' }));
      return;
    }
    // A resume asked while one replays (the client was told of a drop meanwhile) runs after it.
    client.nextResume = Math.min(client.nextResume ?? Infinity, msg.data.since);
    if (client.resuming) return;
    client.resuming = true;
    // Live frames wait until the replay is through, then go out less what the replay carried, so
    // the client sees each batch once and in time order.
    client.outbox.hold();
    const replayed = new Map<string, [number, number][]>();
    try {
      while (client.nextResume !== null) {
        const since = client.nextResume;
        client.nextResume = null;
        await this.replay(client, since, replayed);
      }
    } finally {
      client.resuming = false;
      // A queued second resume may have gone back before the first: spans in time order, and
      // overlapping ones joined (countsOutside wants them apart).
      for (const [gw, spans] of replayed) replayed.set(gw, joinSpans(spans));
      client.outbox.release(replayed);
    }
  }

  /**
   * Replays the batches whose bins end after `since` (at most RESUME_MAX_AGE_MS back), a page at a
   * time (at most RESUME_PAGE batches and RESUME_PAGE_BYTES), each page once the last has left, so
   * a long gap never overflows the client's queue; then `resumed`. `replayed` collects, per
   * gateway, the [t0, t1) spans sent.
   */
  private async replay(client: LiveClient, asked: number, replayed: Map<string, [number, number][]>): Promise<void> {
    const since = Math.max(asked, Date.now() - RESUME_MAX_AGE_MS);
    let after: ResumeCursor | null = null;
    let batches = 0;
    let until = since;
    try {
      for (;;) {
        const page = await countsPage(client.bench, since, after);
        let bytes = 0;
        after = page.next;
        for (const [i, m] of page.messages.entries()) {
          const q = this.queued(m);
          if (i > 0 && bytes + q.bytes > RESUME_PAGE_BYTES) {
            const last = page.messages[i - 1]!;
            after = { t0: last.t0, gateway: last.gateway };
            break;
          }
          bytes += q.bytes;
          client.outbox.push(q);
          const end = m.t0 + binsOf(m) * m.dt;
          // Contiguous batches extend one span, so a long replay keeps a few spans per gateway, not one per batch.
          const spans = replayed.get(m.gateway) ?? [];
          const prev = spans.at(-1);
          if (prev && prev[1] === m.t0) prev[1] = end;
          else spans.push([m.t0, end]);
          replayed.set(m.gateway, spans);
          until = Math.max(until, end);
          batches++;
        }
        if (!after) break;
        if (!(await this.drained(client))) return;
      }
      const complete = since === asked;
      client.outbox.push(this.queued({ type: 'resumed', bench: client.bench, since: asked, until, batches, complete }));
    } catch (err) {
      console.warn('[live] resume failed:', err instanceof Error ? err.message : err);
      client.outbox.push(this.queued({ type: 'error', error: 'resume failed; try again' }));
    }
  }

  /** Resolves true once the client's queue is empty and its socket buffer low; false if it closed. */
  private async drained(client: LiveClient): Promise<boolean> {
    while (client.ws.readyState === client.ws.OPEN && (client.outbox.size > 0 || client.ws.bufferedAmount > HIGH_WATER_BYTES)) {
      await new Promise((resolve) => setTimeout(resolve, DRAIN_POLL_MS));
    }
    return client.ws.readyState === client.ws.OPEN;
  }

  /** Serialises once; the same Buffer goes to every client (ws would re-encode a string per send). */
  private queued(msg: LiveMessage | FeatureMessage): Queued & { data: Buffer } {
    const data = Buffer.from(JSON.stringify(msg));
    return { msg, data, bytes: data.length };
  }

  private beat(): void {
    const sockets = new Set<LiveClient | StatusWatcher>();
    for (const set of this.benches.values()) for (const c of set) sockets.add(c);
    for (const set of this.watchers.values()) for (const w of set) sockets.add(w);
    // An all=1 socket on a lab without benches is in no bench's set.
    for (const w of this.allWatchers) sockets.add(w);
    for (const c of sockets) {
      if (!c.alive) {
        c.ws.terminate();
        continue;
      }
      c.alive = false;
      c.ws.ping();
    }
  }

  async close(): Promise<void> {
    this.unsubscribe();
    clearInterval(this.heartbeat);
    if (this.frameTimer) clearTimeout(this.frameTimer);
    if (this.frameImmediate) clearImmediate(this.frameImmediate);
    this.pending.clear();
    for (const set of this.benches.values()) for (const c of set) c.ws.terminate();
    for (const set of this.watchers.values()) for (const w of set) w.ws.terminate();
    for (const w of this.allWatchers) w.ws.terminate();
    this.benches.clear();
    this.watchers.clear();
    this.allWatchers.clear();
    await new Promise<void>((resolve) => this.wss.close(() => resolve()));
  }
}
