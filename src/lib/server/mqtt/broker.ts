// The embedded MQTT broker (aedes) on 127.0.0.1:MQTT_PORT. Policy lives in the named hooks below.
//
// Durability: for QoS 1, aedes writes PUBACK only after `authorizePublish` calls back, and before it
// runs `published` (lib/handlers/publish.js: authorizePublish → enqueuePublish → PubAck → publish).
// So the ingest runs INSIDE authorizePublish: a gateway is told a batch is safe only after COMMIT,
// and a server killed mid-stream leaves unacknowledged batches with the gateway, which re-sends them.
import net from 'node:net';
import { Aedes, type AuthenticateError, type Client, type PublishPacket, type Subscription } from 'aedes';
import { eq } from 'drizzle-orm';
import { getDb } from '../db/index.ts';
import { gateways } from '../db/schema.ts';
import type { Ingest } from '../ingest/pipeline.ts';
import { verifyGatewayToken } from '../provisioning.ts';
import { MAX_PAYLOAD_BYTES } from '../../contract/wire.ts';
import { PacketSizeGuard } from './packet-guard.ts';
import { gatewayMayPublish, gatewayMaySubscribe } from './topic-policy.ts';
import { bridgeV5, sniffConnectLevel } from './v5-bridge.ts';
import type { MqttTransport } from './transport.ts';
import { listen } from '../listen.ts';

export interface EmbeddedBrokerOptions {
  host: string;
  /** 0 picks a free port (tests). */
  port: number;
  prefix: string;
  ingest: Ingest;
}

function authError(returnCode: 2 | 3 | 4 | 5, message: string): AuthenticateError {
  return Object.assign(new Error(message), { returnCode }) as AuthenticateError;
}

/**
 * The largest remaining length of a packet the broker reads whole: a PUBLISH of four times the
 * contract's largest payload (256 KiB) on a gateway's longest topic (`{prefix}/{40-char gw}/status`),
 * with the topic's 2-byte length and the QoS 1 packet id. A payload a little over the contract's
 * limit (a gateway's bug) is still read, rejected whole with its reason and counted, and the
 * gateway's session goes on; anything longer closes the connection at its header, so a huge
 * publish is never buffered.
 */
export function maxPacketRemaining(prefix: string): number {
  return 2 + Buffer.byteLength(`${prefix}/${'g'.repeat(40)}/status`) + 2 + 4 * MAX_PAYLOAD_BYTES;
}

export async function startEmbeddedBroker(opts: EmbeddedBrokerOptions): Promise<MqttTransport> {
  const { prefix, ingest } = opts;
  const gatewayOf = new WeakMap<Client, string>();
  const sessions = new Map<string, Set<Client>>();

  // Who holds each client id: aedes gives a client id's session (subscriptions, queued commands)
  // to whoever connects with it next and closes the connection holding it (3.1.1 §3.1.4-2), so a
  // gateway connecting as another's client id would cut that gateway off or inherit its session.
  // Kept while connected, and after a persistent session (clean = 0) for as long as aedes keeps it.
  const clientIdHolders = new Map<string, { gateway: string; client: Client }>();

  /** The other gateway that `clientId` belongs to, or null when `gw` may use it. */
  async function clientIdTakenFrom(clientId: string, gw: string): Promise<string | null> {
    // Our gateway CLI uses its own id; other clients (mosquitto_pub, mqtt.js) pick random ones.
    if (clientId === gw) return null;
    const held = clientIdHolders.get(clientId)?.gateway;
    if (held !== undefined && held !== gw) return held;
    const [row] = await getDb().select({ id: gateways.id }).from(gateways).where(eq(gateways.id, clientId)).limit(1);
    return row ? row.id : null;
  }

  // CONNECT: username = gateway id, password = its token (contract, "Transport").
  async function authenticate(client: Client, username: string | undefined, password: Buffer | undefined, done: (err: AuthenticateError | null, ok: boolean | null) => void) {
    const id = username ?? '';
    try {
      const ok = await verifyGatewayToken(id, password?.toString('utf8') ?? '');
      if (ok && (await clientIdTakenFrom(client.id, id)) !== null) {
        void ingest.writer.refused(id, `connect as client id ${client.id.slice(0, 80)}, another gateway's`);
        // 3.1.1 §3.2.2.3: 2 = identifier rejected.
        return done(authError(2, 'client id belongs to another gateway'), null);
      }
      if (ok) {
        clientIdHolders.set(client.id, { gateway: id, client });
        // A clean session ends with its connection (registered or not); a newer connection may hold the id by now.
        client.conn.once('close', () => {
          if (client.clean && clientIdHolders.get(client.id)?.client === client) clientIdHolders.delete(client.id);
        });
        gatewayOf.set(client, id);
        ingest.directory.remember(id, ok.benchId);
        return done(null, true);
      }
      const [row] = await getDb().select({ revokedAt: gateways.revokedAt }).from(gateways).where(eq(gateways.id, id)).limit(1);
      if (row) void ingest.writer.refused(id, row.revokedAt ? 'connect with a revoked gateway' : 'connect with a wrong token');
      // 3.1.1 §3.2.2.3: 4 = bad user name or password, 5 = not authorised (revoked).
      done(row?.revokedAt ? authError(5, 'gateway revoked') : authError(4, 'bad gateway id or token'), null);
    } catch (err) {
      console.warn('[mqtt] token check failed:', err instanceof Error ? err.message : err);
      done(authError(3, 'server unavailable'), null);
    }
  }

  // PUBLISH: only own counts/status/ack; `$` topics stay the broker's (the default hook's guard,
  // which a custom hook replaces). Refusing closes the connection: 3.1.1 has no negative PUBACK.
  function authorizePublish(client: Client | null, packet: PublishPacket, callback: (err?: Error | null) => void) {
    const gw = client ? gatewayOf.get(client) : undefined;
    if (!gw) return callback(new Error('not a gateway session'));
    const verdict = gatewayMayPublish(gw, packet.topic, prefix);
    if (!verdict.ok) {
      void ingest.writer.refused(gw, verdict.reason);
      return callback(new Error(verdict.reason));
    }
    const payload = typeof packet.payload === 'string' ? Buffer.from(packet.payload) : packet.payload;
    void ingest.handle(gw, verdict.kind, payload).then(() => {
      if (client) holdWrites(client);
      callback(null);
    });
  }

  // One write commits many batches at once, and their PUBACKs go out in the same turn of the event
  // loop. Each would be its own socket write (a syscall, ~10 µs on loopback); corked until the turn
  // ends, a gateway's PUBACKs leave in one write. At saturation that was a tenth of the server's CPU.
  const corked = new Set<net.Socket>();
  const uncorkAll = () => {
    for (const s of corked) s.uncork();
    corked.clear();
  };
  function holdWrites(client: Client) {
    const conn: unknown = client.conn;
    if (!(conn instanceof net.Socket) || corked.has(conn)) return;
    if (corked.size === 0) setImmediate(uncorkAll);
    conn.cork();
    corked.add(conn);
  }

  // SUBSCRIBE: only its own cmd. cb(null, null) refuses that one topic (SUBACK 0x80) and keeps the session.
  function authorizeSubscribe(client: Client, sub: Subscription, callback: (err: Error | null, sub?: Subscription | null) => void) {
    const gw = gatewayOf.get(client);
    if (gw && gatewayMaySubscribe(gw, sub.topic, prefix)) return callback(null, sub);
    if (gw) void ingest.writer.refused(gw, `subscribe to ${sub.topic.slice(0, 80)}`);
    callback(null, null);
  }

  const broker = new Aedes({ authenticate, authorizePublish, authorizeSubscribe });
  await broker.listen();
  broker.on('clientReady', (client) => {
    const gw = gatewayOf.get(client);
    if (!gw) return;
    const set = sessions.get(gw) ?? new Set();
    set.add(client);
    sessions.set(gw, set);
  });
  broker.on('clientDisconnect', (client) => {
    const gw = gatewayOf.get(client);
    if (gw) sessions.get(gw)?.delete(client);
  });

  // Packet size: aedes 1.2 has no limit, and its parser (mqtt-packet) holds a packet whole before
  // anyone sees it, so a 100 MB PUBLISH was buffered and only then refused. aedes takes its bytes
  // with the socket's read() (paused mode, lib/client.js `nextBatch`; flowing mode calls it too), so
  // wrapping that one method of our own socket shows the guard every byte aedes gets, in order and
  // without a copy or another stream in the path. An oversize packet closes the connection at its
  // header (the gateway re-sends what was not acknowledged) and counts against the gateway.
  const maxRemaining = maxPacketRemaining(prefix);
  function guardPacketSize(socket: net.Socket, client: () => Client | undefined) {
    const guard = new PacketSizeGuard(maxRemaining);
    const read = socket.read.bind(socket);
    socket.read = (size?: number): unknown => {
      const chunk: unknown = read(size);
      const refusal = chunk instanceof Uint8Array ? guard.feed(chunk) : null;
      if (refusal === null) return chunk;
      const c = client();
      const gw = c ? gatewayOf.get(c) : undefined;
      if (gw) void ingest.writer.refused(gw, refusal);
      socket.destroy();
      return null;
    };
  }

  const sockets = new Set<net.Socket>();
  const server = net.createServer((socket) => {
    // Nagle's algorithm adds tens of ms to small MQTT packets (stack notes, TCP_NODELAY lesson).
    socket.setNoDelay(true);
    sockets.add(socket);
    socket.on('close', () => sockets.delete(socket));
    // The CONNECT's protocol level picks the way in: MQTT 5 through the bridge (v5-bridge.ts).
    // The sniffed bytes are put back before the guard wraps read(), so it sees each byte once.
    void sniffConnectLevel(socket).then((level) => {
      if (socket.destroyed) return;
      let client: Client | undefined;
      guardPacketSize(socket, () => client);
      client = broker.handle(level === 5 ? bridgeV5(socket, { maxPacketRemaining: maxRemaining }) : socket);
    });
  });
  const port = await listen(server, opts.port, opts.host);

  return {
    mode: 'embedded',
    port,
    publish: (topic, payload) =>
      new Promise((resolve, reject) =>
        broker.publish({ cmd: 'publish', topic, payload: Buffer.from(payload), qos: 1, retain: false, dup: false }, (err) => (err ? reject(err) : resolve())),
      ),
    disconnectGateway(gatewayId) {
      ingest.directory.forget(gatewayId);
      for (const client of sessions.get(gatewayId) ?? []) client.close();
      sessions.delete(gatewayId);
    },
    close: async () => {
      const closed = new Promise<void>((resolve) => server.close(() => resolve()));
      for (const s of sockets) s.destroy();
      await closed;
      await new Promise<void>((resolve) => broker.close(() => resolve()));
      await ingest.writer.flushed();
    },
  };
}
