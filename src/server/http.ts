// The web server: static files from dist/client, everything else through Astro's handler, and
// WebSocket upgrades handed to whoever registered for a path (Astro endpoints never see upgrades).
import { existsSync } from 'node:fs';
import http from 'node:http';
import type { Socket } from 'node:net';
import type { Duplex } from 'node:stream';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import send from 'send';
import { listen } from '../lib/server/listen.ts';

export type UpgradeHandler = (req: http.IncomingMessage, socket: Duplex, head: Buffer) => void;

type AstroHandler = (req: http.IncomingMessage, res: http.ServerResponse, next?: (err?: unknown) => void, locals?: object) => void;

export interface WebServer {
  server: http.Server;
  port: number;
  url: string;
  close(): Promise<void>;
}

/** What no route answers: JSON `{ error }` under /api (the contract's error shape), plain text elsewhere. */
function answer(res: http.ServerResponse, status: number, error: string, api: boolean, headers: Record<string, string> = {}): void {
  if (res.headersSent) {
    res.end();
    return;
  }
  res.writeHead(status, { 'content-type': api ? 'application/json; charset=utf-8' : 'text/plain; charset=utf-8', ...headers });
  res.end(api ? JSON.stringify({ error }) : error);
}

/**
 * How long a connection answered and closed before its request body was read goes on taking that
 * body, ms. A client that writes its whole body before reading (browsers, most scripts) is still
 * sending when an early answer (413 for an announced oversize upload) leaves; closing the socket
 * with its bytes unread makes the kernel answer them with a reset, which can reach the client
 * before the answer does. So the server half-closes, reads and drops what comes, and closes when
 * the client does or after this long ("lingering close", RFC 9112 §9.6).
 */
const LINGER_MS = 2_000;

/**
 * Called when a response has finished: Node then ends the socket of a `Connection: close` answer
 * and destroys it once our side is flushed. Where the request's body is still coming, the destroy
 * waits for the client's end or LINGER_MS instead.
 */
function lingerIfBodyUnread(req: http.IncomingMessage, socket: Socket): void {
  if (req.complete || !socket.writableEnded || socket.destroyed) return;
  // The destroy Node's `destroySoon` left for when our side is flushed (net.Socket, Node 20).
  socket.removeListener('finish', socket.destroy);
  const timer = setTimeout(() => socket.destroy(), LINGER_MS);
  socket.once('end', () => socket.destroy());
  socket.once('close', () => clearTimeout(timer));
  // Node's answer already left the body to be dropped (the request was dumped); keep it flowing.
  req.resume();
}

export async function startWebServer(opts: {
  port: number;
  host: string;
  distDir?: string;
  upgrades: Record<string, UpgradeHandler>;
}): Promise<WebServer> {
  const dist = path.resolve(opts.distDir ?? 'dist');
  const entry = path.join(dist, 'server', 'entry.mjs');
  if (!existsSync(entry)) throw new Error(`${entry} is missing: run \`npm run build\` first`);
  const { handler } = (await import(pathToFileURL(entry).href)) as { handler: AstroHandler };
  const clientDir = path.join(dist, 'client');

  const server = http.createServer((req, res) => {
    // Taken now: by the time the answer has finished, Node may have detached the socket from it.
    const socket = req.socket;
    res.once('finish', () => lingerIfBodyUnread(req, socket));
    const url = req.url ?? '/';
    const pathname = url.split('?')[0] ?? '/';
    const api = pathname.startsWith('/api/');
    if (opts.upgrades[pathname]) {
      // Only a WebSocket handshake is served here (those arrive as 'upgrade' events, below).
      answer(res, 426, 'this path only answers a WebSocket upgrade', api, { upgrade: 'websocket', connection: 'Upgrade' });
      return;
    }
    const astro = () =>
      handler(req, res, (err) => {
        if (err) console.error('[http]', err);
        answer(res, err ? 500 : 404, err ? 'internal error' : 'not found', api);
      });
    if ((req.method === 'GET' || req.method === 'HEAD') && !pathname.startsWith('/api/') && pathname.includes('.')) {
      // Hashed build assets never change; other public files may.
      const immutable = pathname.startsWith('/_astro/');
      send(req, pathname, { root: clientDir, index: false, dotfiles: 'deny', immutable, maxAge: immutable ? '1y' : 0 })
        .on('error', () => astro())
        .pipe(res);
      return;
    }
    astro();
  });
  server.on('connection', (socket) => socket.setNoDelay(true));
  server.on('upgrade', (req, socket, head) => {
    const pathname = (req.url ?? '/').split('?')[0] ?? '/';
    const onUpgrade = opts.upgrades[pathname];
    if (!onUpgrade) {
      socket.end('HTTP/1.1 404 Not Found\r\nConnection: close\r\n\r\n');
      return;
    }
    onUpgrade(req, socket, head);
  });
  const port = await listen(server, opts.port, opts.host);
  return {
    server,
    port,
    url: `http://${opts.host === '0.0.0.0' ? '127.0.0.1' : opts.host}:${port}`,
    close: () =>
      new Promise((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}
