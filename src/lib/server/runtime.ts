// Process-wide services that API routes (inside Astro's bundle) and the Node entry share. Kept on
// globalThis because the modules load twice in one process (see DEVELOPERS.md, "Singletons").
import type { Ack, Command } from '../contract/wire.ts';
import type { FeatureMessage, LiveMessage } from '../live-messages.ts';

export interface CommandSender {
  /** Publishes a command to a gateway and resolves with its ack (or a timeout error). */
  send(gatewayId: string, command: Command, timeoutMs?: number): Promise<Ack>;
  /** Publishes without waiting for the ack (the ack still reaches the bench's live clients). */
  publish(gatewayId: string, command: Command): Promise<void>;
  /** Whether command `id` was sent to `gatewayId` (acks of any other id are refused). */
  sentTo(gatewayId: string, id: string): Promise<boolean>;
}

export interface LiveService {
  /** Pushes a message to every WebSocket client watching the bench. */
  publish(benchId: string, message: LiveMessage | FeatureMessage): void;
  /** Everything the live path emits (stored counts, status, acks), for in-process consumers such as fits and alarms. */
  subscribe(listener: (benchId: string, message: LiveMessage | FeatureMessage) => void): () => void;
  clientCount(benchId?: string): number;
}

export interface GatewaySessions {
  /** Drops a gateway's live MQTT sessions (its token was revoked or rotated). */
  disconnect(gatewayId: string): void;
}

export interface GatewaySilence {
  /** When a gateway whose status says online was last heard, if it has been silent too long since (ms); else null. */
  silentSince(gatewayId: string): number | null;
}

export interface AnalysisFigures {
  /** The bench's latest live figures (null until it has sent counts since the start). */
  figures(benchId: string): import('../bench-figures.ts').BenchFigures | null;
  /** Fits the sweeps in one gateway's stored bins (an imported run); resolves with how many were stored. */
  fitStored(benchId: string, gatewayId: string, fromMs: number, toMs: number): Promise<number>;
}

/** The broker as gateways see it (the admin page tells a new gateway where to connect). */
export interface GatewayBroker {
  /** MQTT_URL, when the server uses an external broker. */
  external: string | null;
  /** Where the embedded broker listens (MQTT_HOST) and its port; null port with an external broker. */
  host: string;
  port: number | null;
  prefix: string;
}

export interface Runtime {
  analysis?: AnalysisFigures;
  gatewayBroker?: GatewayBroker;
  commands?: CommandSender;
  live?: LiveService;
  gatewaySessions?: GatewaySessions;
  gatewaySilence?: GatewaySilence;
  /** Extra services registered by later stages (live hub, alarms, …), by name. */
  [service: string]: unknown;
}

const KEY = Symbol.for('fringewise.runtime');
type Holder = { [KEY]?: Runtime };

export function runtime(): Runtime {
  const holder = globalThis as Holder;
  holder[KEY] ??= {};
  return holder[KEY];
}
