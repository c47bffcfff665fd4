// Process-wide services that API routes (inside Astro's bundle) and the Node entry share. Kept on
// globalThis because the modules load twice in one process (see DEVELOPERS.md, "Singletons").
import type { Ack, Command } from '../contract/wire.ts';

export interface CommandSender {
  /** Publishes a command to a gateway and resolves with its ack (or a timeout error). */
  send(gatewayId: string, command: Command, timeoutMs?: number): Promise<Ack>;
}

export interface Runtime {
  commands?: CommandSender;
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
