// What the rest of the server needs from MQTT, whichever broker carries it: publish commands, drop
// a gateway's live session, stop.
export interface MqttTransport {
  mode: 'embedded' | 'external';
  /** The embedded broker's TCP port (null in external mode). */
  port: number | null;
  /** Publishes as the privileged server; resolves once the broker has it (QoS 1). */
  publish(topic: string, payload: string): Promise<void>;
  /** Closes every live session of a gateway (after its token was revoked or rotated). */
  disconnectGateway(gatewayId: string): void;
  close(): Promise<void>;
}

export const MQTT_PREFIX_DEFAULT = 'fringewise/v1';
