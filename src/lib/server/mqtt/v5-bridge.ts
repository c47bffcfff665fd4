// MQTT 5 clients on the embedded broker. The contract lets a gateway speak MQTT 3.1.1 or 5, and
// aedes 1.2 speaks 3.1.1 only (it answers a version 5 CONNECT "unacceptable protocol version"). A
// connection whose CONNECT says version 5 is bridged: its packets are read as MQTT 5 and handed
// to aedes as 3.1.1, and aedes's answers go back as MQTT 5, so every policy hook (token, topics,
// size, ingest before PUBACK) holds for both. Connections at 3.1.1 never pass through here.
//
// What 3.1.1 cannot say is dropped or answered here: properties (user properties, message expiry,
// content type, will delay) are dropped; the session is kept past the connection only when the
// client asks to resume it and to keep it (Clean Start 0 and a Session Expiry Interval, which
// aedes then keeps without end); enhanced authentication and topic aliases, which the CONNACK does
// not offer, end the connection with their reason code (5.0 §4.13).
import { randomUUID } from 'node:crypto';
import type net from 'node:net';
import { Duplex } from 'node:stream';
import mqttPacket, { type IConnackPacket, type IConnectPacket, type Packet } from 'mqtt-packet';

/**
 * The protocol level the CONNECT at the start of `b` announces (3.1.1 and 5.0 §3.1.2.2: 4 or 5,
 * 3 for MQTT 3.1); null while more bytes are needed; 0 when `b` does not start with a CONNECT.
 */
export function connectLevel(b: Uint8Array): number | null {
  if (b.length === 0) return null;
  if (b[0] !== 0x10) return 0;
  // Remaining length: 1–4 bytes of 7 bits, the high bit saying another follows (§2.2.3).
  let i = 1;
  for (let n = 0; ; n++) {
    if (n === 4) return 0;
    if (i >= b.length) return null;
    if (!(b[i++]! & 0x80)) break;
  }
  if (i + 2 > b.length) return null;
  const nameLength = (b[i]! << 8) | b[i + 1]!;
  // "MQTT", or "MQIsdp" for 3.1.
  if (nameLength > 6) return 0;
  const at = i + 2 + nameLength;
  return at < b.length ? b[at]! : null;
}

/** How long a connection may take to show its protocol level before aedes gets it as it is (ms). */
const SNIFF_TIMEOUT_MS = 10_000;

/**
 * Reads the first bytes of a connection until its CONNECT shows the protocol level, then puts
 * them back for whoever reads next. Resolves 0 for anything else (aedes then answers it).
 */
export function sniffConnectLevel(socket: net.Socket): Promise<number> {
  return new Promise((resolve) => {
    const chunks: Buffer[] = [];
    const finish = (level: number) => {
      clearTimeout(timer);
      socket.off('readable', onReadable);
      socket.off('end', onEnd);
      socket.off('close', onEnd);
      if (chunks.length && !socket.destroyed) socket.unshift(Buffer.concat(chunks));
      resolve(level);
    };
    const onReadable = () => {
      let chunk: unknown;
      while ((chunk = socket.read()) !== null) if (Buffer.isBuffer(chunk)) chunks.push(chunk);
      const level = connectLevel(Buffer.concat(chunks));
      if (level !== null) finish(level);
    };
    const onEnd = () => finish(0);
    const timer = setTimeout(onEnd, SNIFF_TIMEOUT_MS);
    socket.on('readable', onReadable);
    socket.once('end', onEnd);
    socket.once('close', onEnd);
  });
}

/** 3.1.1 CONNACK return codes (§3.2.2.3) as 5.0 reason codes (§3.2.2.2). */
const CONNACK_REASON: Record<number, number> = {
  0: 0x00,
  1: 0x84, // unacceptable protocol version → Unsupported Protocol Version
  2: 0x85, // identifier rejected → Client Identifier not valid
  3: 0x88, // server unavailable → Server unavailable
  4: 0x86, // bad user name or password → Bad User Name or Password
  5: 0x87, // not authorized → Not authorized
};
/** 5.0 reason codes the bridge sends itself (§2.4). */
const NOT_AUTHORIZED = 0x87;
const BAD_AUTHENTICATION_METHOD = 0x8c;
const TOPIC_ALIAS_INVALID = 0x94;
const PROTOCOL_ERROR = 0x82;
const DISCONNECT_WITH_WILL = 0x04;

/** Bytes of the smallest fixed header for a packet of `remaining` bytes after it (§2.2.3). */
function fixedHeaderBytes(remaining: number): number {
  return 1 + (remaining < 128 ? 1 : remaining < 16_384 ? 2 : remaining < 2_097_152 ? 3 : 4);
}

export interface V5BridgeOptions {
  /** The largest remaining length the broker reads (its size guard): announced as Maximum Packet Size. */
  maxPacketRemaining: number;
}

/**
 * The 3.1.1 side of an MQTT 5 connection, for aedes: a stream that reads and writes 3.1.1 packets
 * while `socket` carries MQTT 5. Closing either side closes the other.
 */
export function bridgeV5(socket: net.Socket, opts: V5BridgeOptions): Duplex {
  const fromClient = mqttPacket.parser({ protocolVersion: 5 });
  const fromBroker = mqttPacket.parser({ protocolVersion: 4 });
  let assignedClientId: string | null = null;
  /** Topic filters per UNSUBSCRIBE in flight: an MQTT 5 UNSUBACK has one reason code for each. */
  const unsubscribing = new Map<number, number>();
  let toBroker: Buffer[] = [];
  let toClient: Buffer[] = [];
  let brokerWantsMore = true;
  /** Set once the bridge ends the connection itself: what the client sent after is not passed on. */
  let ending = false;

  const inner = new Duplex({
    read() {
      brokerWantsMore = true;
      pump();
    },
    writev(chunks, callback) {
      for (const { chunk } of chunks) fromBroker.parse(chunk as Buffer);
      if (!toClient.length) return callback();
      const bytes = Buffer.concat(toClient);
      toClient = [];
      if (socket.write(bytes)) callback();
      else socket.once('drain', () => callback());
    },
    final(callback) {
      socket.end();
      callback();
    },
    destroy(err, callback) {
      socket.destroy();
      callback(err);
    },
  });

  /** Tells the client why, then ends the connection (5.0 §4.13: a DISCONNECT, or a CONNACK before CONNECT is done). */
  function refuse(packet: Packet): void {
    ending = true;
    try {
      socket.write(mqttPacket.generate(packet, { protocolVersion: 5 }));
    } finally {
      socket.destroySoon();
    }
  }

  fromClient.on('packet', (p: Packet) => {
    if (ending) return;
    const out = clientToBroker(p);
    if (out) toBroker.push(mqttPacket.generate(out, { protocolVersion: 4 }));
  });
  fromClient.on('error', () => refuse({ cmd: 'disconnect', reasonCode: PROTOCOL_ERROR }));
  fromBroker.on('packet', (p: Packet) => toClient.push(mqttPacket.generate(brokerToClient(p), { protocolVersion: 5 })));
  fromBroker.on('error', (err: Error) => inner.destroy(err));

  function clientToBroker(p: Packet): Packet | null {
    switch (p.cmd) {
      case 'connect':
        return connect(p);
      case 'publish':
        // The CONNACK offers no aliases (Topic Alias Maximum absent = 0, §3.2.2.3.8).
        if (p.properties?.topicAlias !== undefined) {
          refuse({ cmd: 'disconnect', reasonCode: TOPIC_ALIAS_INVALID });
          return null;
        }
        return { cmd: 'publish', topic: p.topic, payload: p.payload, qos: p.qos, retain: p.retain, dup: p.dup, ...(p.messageId !== undefined && { messageId: p.messageId }) };
      case 'puback':
      case 'pubrec':
      case 'pubrel':
      case 'pubcomp':
        return { cmd: p.cmd, messageId: p.messageId! };
      case 'subscribe':
        return { cmd: 'subscribe', messageId: p.messageId!, subscriptions: p.subscriptions.map((s) => ({ topic: s.topic, qos: s.qos })) };
      case 'unsubscribe':
        unsubscribing.set(p.messageId!, p.unsubscriptions.length);
        return { cmd: 'unsubscribe', messageId: p.messageId!, unsubscriptions: p.unsubscriptions };
      case 'pingreq':
        return p;
      case 'disconnect':
        // "Disconnect with Will Message": the will goes out as if the connection had dropped.
        if (p.reasonCode === DISCONNECT_WITH_WILL) {
          ending = true;
          socket.destroy();
          return null;
        }
        return { cmd: 'disconnect' };
      default:
        // AUTH (never offered) or a packet only a server sends.
        refuse({ cmd: 'disconnect', reasonCode: PROTOCOL_ERROR });
        return null;
    }
  }

  function connect(p: IConnectPacket): IConnectPacket | null {
    if (p.properties?.authenticationMethod !== undefined) {
      refuse({ cmd: 'connack', sessionPresent: false, reasonCode: BAD_AUTHENTICATION_METHOD });
      return null;
    }
    // 5.0 lets a client leave its id to the server (§3.1.3.1), and 3.1.1 only with a clean session.
    let clientId = p.clientId;
    if (!clientId) clientId = assignedClientId = `v5-${randomUUID()}`;
    const expiry = p.properties?.sessionExpiryInterval ?? 0;
    return {
      cmd: 'connect',
      protocolId: 'MQTT',
      protocolVersion: 4,
      clean: p.clean !== false || expiry === 0,
      keepalive: p.keepalive ?? 0,
      clientId,
      // 3.1.1 allows a password only with a user name (§3.1.2.9); 5.0 does not need one.
      ...((p.username !== undefined || p.password !== undefined) && { username: p.username ?? '' }),
      ...(p.password !== undefined && { password: p.password }),
      ...(p.will && { will: { topic: p.will.topic, payload: p.will.payload, qos: p.will.qos ?? 0, retain: p.will.retain ?? false } }),
    };
  }

  function brokerToClient(p: Packet): Packet {
    switch (p.cmd) {
      case 'connack':
        return connack(p);
      case 'suback':
        // 3.1.1's failure 0x80: the only subscription refused is one the topic policy forbids.
        return { cmd: 'suback', messageId: p.messageId!, granted: (p.granted as number[]).map((g) => (g === 0x80 ? NOT_AUTHORIZED : g)) };
      case 'unsuback': {
        const n = unsubscribing.get(p.messageId!) ?? 1;
        unsubscribing.delete(p.messageId!);
        return { cmd: 'unsuback', messageId: p.messageId!, granted: new Array<number>(n).fill(0) };
      }
      case 'publish':
        return { cmd: 'publish', topic: p.topic, payload: p.payload, qos: p.qos, retain: p.retain, dup: p.dup, ...(p.messageId !== undefined && { messageId: p.messageId }) };
      default:
        return p;
    }
  }

  function connack(p: IConnackPacket): IConnackPacket {
    const reasonCode = CONNACK_REASON[p.returnCode ?? 0] ?? 0x80;
    if (reasonCode !== 0) return { cmd: 'connack', sessionPresent: false, reasonCode };
    return {
      cmd: 'connack',
      sessionPresent: p.sessionPresent,
      reasonCode,
      properties: {
        ...(assignedClientId !== null && { assignedClientIdentifier: assignedClientId }),
        maximumPacketSize: fixedHeaderBytes(opts.maxPacketRemaining) + opts.maxPacketRemaining,
        // A gateway may subscribe to its own cmd topic only: no wildcards, no shared subscriptions.
        wildcardSubscriptionAvailable: false,
        subscriptionIdentifiersAvailable: false,
        sharedSubscriptionAvailable: false,
      },
    };
  }

  /** Moves the client's packets to aedes as fast as aedes reads them. */
  function pump(): void {
    while (brokerWantsMore && !socket.destroyed) {
      const chunk: unknown = socket.read();
      if (chunk === null) return;
      if (Buffer.isBuffer(chunk)) fromClient.parse(chunk);
      if (toBroker.length) {
        const bytes = Buffer.concat(toBroker);
        toBroker = [];
        brokerWantsMore = inner.push(bytes);
      }
    }
  }

  socket.on('readable', pump);
  socket.on('end', () => inner.push(null));
  socket.on('close', () => inner.destroy());
  socket.on('error', (err) => inner.destroy(err));
  return inner;
}
