import { describe, expect, it } from 'vitest';
import mqttPacket from 'mqtt-packet';
import { PacketSizeGuard } from './packet-guard.ts';

const publish = (payloadBytes: number) =>
  mqttPacket.generate({ cmd: 'publish', topic: 'fringewise/v1/gw-1/counts', payload: Buffer.alloc(payloadBytes, 0x31), qos: 1, messageId: 7, retain: false, dup: false });
const connect = mqttPacket.generate({ cmd: 'connect', protocolId: 'MQTT', protocolVersion: 4, clientId: 'gw-1', clean: true, keepalive: 30, username: 'gw-1', password: Buffer.from('t') });
const ping = mqttPacket.generate({ cmd: 'pingreq' });

/** Feeds the bytes in pieces of `size`, returning the first refusal. */
function feedInPieces(guard: PacketSizeGuard, bytes: Buffer, size: number): string | null {
  for (let i = 0; i < bytes.length; i += size) {
    const r = guard.feed(bytes.subarray(i, i + size));
    if (r) return r;
  }
  return null;
}

describe('PacketSizeGuard', () => {
  const limit = 1000;
  // Remaining length of publish(n): 2 + topic (25) + 2 (packet id) + n.
  const fits = Buffer.concat([connect, publish(limit - 29), ping, publish(0), publish(300), ping]);

  it('lets packets up to the limit through, however the bytes are split', () => {
    for (const size of [1, 2, 3, 7, 64, fits.length]) expect(feedInPieces(new PacketSizeGuard(limit), fits, size), String(size)).toBeNull();
  });

  it('refuses a packet one byte over the limit from its header, split anywhere', () => {
    const over = Buffer.concat([fits, publish(limit - 28)]);
    for (const size of [1, 2, 5, 64, over.length]) expect(feedInPieces(new PacketSizeGuard(limit), over, size), String(size)).toMatch(/1001 bytes or more/);
  });

  it('refuses a 100 MB publish from its first bytes, without its body', () => {
    const header = Buffer.from([0x32, 0x80, 0x80, 0x80, 0x30]); // PUBLISH QoS 1, remaining length 100,663,296
    expect(new PacketSizeGuard(256 * 1024).feed(header)).toMatch(/over the 262144-byte limit/);
  });

  it('refuses a length with a fifth byte', () => {
    expect(new PacketSizeGuard(limit).feed(Buffer.from([0x30, 0x80, 0x80, 0x80, 0x80, 0x01]))).toBe('malformed packet length');
  });
});
