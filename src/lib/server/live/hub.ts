// The WebSocket hub behind `GET /api/v1/live?bench=`: authenticates the upgrade with the same check
// as the middleware, keeps each bench's clients, pushes what the fan-out emits, answers `resume`,
// and terminates sockets that stop answering pings.
import type http from 'node:http';
import type { Socket } from 'node:net';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type WebSocket } from 'ws';
import { benchIdSchema } from '../../contract/wire.ts';
import { clientMessageSchema, type FeatureMessage, type LiveMessage } from '../../live-messages.ts';
import { authenticate } from '../auth/authenticate.ts';
import type { SessionUser } from '../auth/lucia.ts';
import type { Fanout } from '../ingest/fanout.ts';
import { canReadBench } from './access.ts';
import { Outbox } from './outbox.ts';
import { countsSince } from './resume.ts';

/** Ping period; a socket that has not answered the previous ping by the next one is terminated (ms). */
const HEARTBEAT_MS = 30_000;
/** Largest client message accepted (bytes): clients only send small control messages. */
const MAX_CLIENT_MESSAGE_BYTES = 4 * 1024;

interface LiveClient {
  ws: WebSocket;
  bench: string;
  user: SessionUser;
  outbox: Outbox;
  alive: boolean;
  resuming: boolean;
}

function refuse(socket: Duplex, status: number, reason: string, error: string): void {
  const body = JSON.stringify({ error });
  socket.end(`HTTP/1.1 ${status} ${reason}\r\nContent-Type: application/json\r\nContent-Length: ${Buffer.byteLength(body)}\r\nConnection: close\r\n\r\n${body}`);
}

export class LiveHub {
  private readonly wss = new WebSocketServer({ noServer: true, maxPayload: MAX_CLIENT_MESSAGE_BYTES });
  private readonly benches = new Map<string, Set<LiveClient>>();
  private readonly heartbeat: NodeJS.Timeout;
  private readonly unsubscribe: () => void;

  constructor(fanout: Fanout) {
    this.unsubscribe = fanout.subscribe((benchId, message) => this.publish(benchId, message));
    this.heartbeat = setInterval(() => this.beat(), HEARTBEAT_MS);
    this.heartbeat.unref();
  }

  /** Sends a message to every client watching a bench (fits, alarms and the like call this too). */
  publish(benchId: string, message: LiveMessage | FeatureMessage): void {
    const clients = this.benches.get(benchId);
    if (!clients?.size) return;
    const text = JSON.stringify(message);
    for (const c of clients) c.outbox.push({ msg: message, text, bytes: text.length });
  }

  clientCount(benchId?: string): number {
    if (benchId) return this.benches.get(benchId)?.size ?? 0;
    let n = 0;
    for (const set of this.benches.values()) n += set.size;
    return n;
  }

  /** The `upgrade` handler for LIVE_PATH. */
  readonly handleUpgrade = (req: http.IncomingMessage, socket: Duplex, head: Buffer): void => {
    (socket as Socket).setNoDelay?.(true);
    void this.admit(req, socket, head).catch((err) => {
      console.error('[live] upgrade failed:', err);
      refuse(socket, 500, 'Internal Server Error', 'internal error');
    });
  };

  private async admit(req: http.IncomingMessage, socket: Duplex, head: Buffer): Promise<void> {
    const url = new URL(req.url ?? '/', 'http://localhost');
    const bench = benchIdSchema.safeParse(url.searchParams.get('bench') ?? '');
    if (!bench.success) return refuse(socket, 400, 'Bad Request', 'bench must be a bench id');
    const auth = await authenticate(req.headers);
    if (!auth.user) return refuse(socket, 401, 'Unauthorized', 'sign in or send a valid API token');
    // A cookie rides along with cross-site requests too: a cookie-authenticated socket must come from our own pages.
    if (auth.method === 'session') {
      const origin = req.headers.origin;
      if (!origin || new URL(origin).host !== req.headers.host) return refuse(socket, 403, 'Forbidden', 'cross-site WebSocket refused');
    }
    if (!(await canReadBench(auth.user, bench.data))) return refuse(socket, 403, 'Forbidden', 'you may not watch this bench');
    const user = auth.user;
    this.wss.handleUpgrade(req, socket, head, (ws) => this.attach(ws, bench.data, user));
  }

  private attach(ws: WebSocket, bench: string, user: SessionUser): void {
    const client: LiveClient = { ws, bench, user, outbox: new Outbox(ws, bench), alive: true, resuming: false };
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
    if (client.resuming) {
      client.outbox.push(this.queued({ type: 'error', error: 'a resume is already running' }));
      return;
    }
    client.resuming = true;
    try {
      const since = msg.data.since;
      const { messages, complete } = await countsSince(client.bench, since);
      for (const m of messages) client.outbox.push(this.queued(m));
      const last = messages[messages.length - 1];
      const until = last ? last.t0 + (Object.values(last.ch)[0]?.length ?? 0) * last.dt : since;
      client.outbox.push(this.queued({ type: 'resumed', bench: client.bench, since, until, batches: messages.length, complete }));
    } catch (err) {
      console.warn('[live] resume failed:', err instanceof Error ? err.message : err);
      client.outbox.push(this.queued({ type: 'error', error: 'resume failed; try again' }));
    } finally {
      client.resuming = false;
    }
  }

  private queued(msg: LiveMessage) {
    const text = JSON.stringify(msg);
    return { msg, text, bytes: text.length };
  }

  private beat(): void {
    for (const set of this.benches.values()) {
      for (const c of set) {
        if (!c.alive) {
          c.ws.terminate();
          continue;
        }
        c.alive = false;
        c.ws.ping();
      }
    }
  }

  async close(): Promise<void> {
    this.unsubscribe();
    clearInterval(this.heartbeat);
    for (const set of this.benches.values()) for (const c of set) c.ws.terminate();
    this.benches.clear();
    await new Promise<void>((resolve) => this.wss.close(() => resolve()));
  }
}
