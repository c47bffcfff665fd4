// External broker mode (MQTT_URL): the server connects as a privileged MQTT client instead of
// running aedes. The broker's ACL enforces the topic policy (DEVELOPERS.md, "External broker").
//
// Durability: mqtt.js sends PUBACK only after `handleMessage` calls back, so the override below
// acknowledges a batch after COMMIT. With a persistent session (clean: false, fixed client id) the
// broker keeps QoS 1 messages for the server while it is down.
import mqtt, { type MqttClient } from 'mqtt';
import { parseTopic } from '../../contract/wire.ts';
import type { Ingest } from '../ingest/pipeline.ts';
import type { MqttTransport } from './transport.ts';

export interface ExternalBrokerOptions {
  url: string;
  prefix: string;
  ingest: Ingest;
  clientId?: string;
}

export async function connectExternalBroker(opts: ExternalBrokerOptions): Promise<MqttTransport> {
  const { prefix, ingest } = opts;
  const client: MqttClient = await mqtt.connectAsync(opts.url, {
    clientId: opts.clientId ?? process.env['MQTT_CLIENT_ID'] ?? 'fringewise-server',
    clean: false,
    protocolVersion: 4,
    reconnectPeriod: 1_000, // ms between reconnect attempts
    connectTimeout: 10_000,
  });
  // Nagle's algorithm adds tens of ms to small packets (stack notes); the stream is new on every reconnect.
  const noDelay = () => (client.stream as unknown as { setNoDelay?: (on: boolean) => void }).setNoDelay?.(true);
  noDelay();
  client.on('connect', noDelay);
  client.on('error', (err) => console.warn('[mqtt] external broker:', err.message));

  client.handleMessage = (packet, done) => {
    const parsed = parseTopic(packet.topic, prefix);
    if (!parsed || parsed.kind === 'cmd') return done();
    const payload = typeof packet.payload === 'string' ? Buffer.from(packet.payload) : packet.payload;
    void ingest.handle(parsed.gw, parsed.kind, payload).then(() => done());
  };

  // One topic per call: mqtt.js rejects a whole multi-topic call when the broker refuses one (stack notes, trap 6).
  for (const kind of ['counts', 'status', 'ack'] as const) {
    const topic = `${prefix}/+/${kind}`;
    const granted = await client.subscribeAsync(topic, { qos: 1 });
    if (!granted.length || granted.some((g) => g.qos === 128)) {
      await client.endAsync(true);
      throw new Error(`the external broker refused the server's subscription to ${topic}: check its ACL (DEVELOPERS.md, "External broker")`);
    }
  }

  return {
    mode: 'external',
    port: null,
    publish: async (topic, payload) => {
      await client.publishAsync(topic, payload, { qos: 1, retain: false });
    },
    // The external broker owns sessions; a lab revokes there too (DEVELOPERS.md, "External broker").
    disconnectGateway: () => undefined,
    close: async () => {
      await client.endAsync();
      await ingest.writer.flushed();
    },
  };
}
