import mqttPacket from 'mqtt-packet';
import { describe, expect, it } from 'vitest';
import { connectLevel } from './v5-bridge.ts';

// CONNECT packets as mqtt-packet (the parser aedes and MQTT.js use) writes them.
const connect = (protocolVersion: 3 | 4 | 5, clientId = 'gw-1') =>
  mqttPacket.generate({ cmd: 'connect', protocolId: protocolVersion === 3 ? 'MQIsdp' : 'MQTT', protocolVersion, clientId, clean: true, keepalive: 30, username: 'gw-1', password: Buffer.from('t') }, { protocolVersion });

describe('connectLevel', () => {
  it('reads the protocol level of a CONNECT: 3 for MQTT 3.1, 4 for 3.1.1, 5 for 5.0', () => {
    expect(connectLevel(connect(3))).toBe(3);
    expect(connectLevel(connect(4))).toBe(4);
    expect(connectLevel(connect(5))).toBe(5);
    // A remaining length of two bytes (a CONNECT over 127 bytes).
    expect(connectLevel(connect(5, 'c'.repeat(200)))).toBe(5);
  });

  it('asks for more bytes until the level byte has come, however the bytes are split', () => {
    for (const version of [3, 4, 5] as const) {
      const bytes = connect(version, 'c'.repeat(200));
      const levelAt = version === 3 ? 11 : 9;
      for (let n = 0; n < levelAt; n++) expect(connectLevel(bytes.subarray(0, n)), `${version}: ${n}`).toBeNull();
      expect(connectLevel(bytes.subarray(0, levelAt + 1))).toBe(version);
    }
  });

  it('answers 0 for what does not start with a CONNECT', () => {
    expect(connectLevel(mqttPacket.generate({ cmd: 'pingreq' }))).toBe(0);
    expect(connectLevel(Buffer.from('GET / HTTP/1.1\r\n'))).toBe(0);
    expect(connectLevel(Buffer.from([0x10, 0x80, 0x80, 0x80, 0x80, 0x01]))).toBe(0);
    expect(connectLevel(Buffer.from([0x10, 0x0a, 0x00, 0x40]))).toBe(0);
  });
});
