// The bench's gateways as they stand now (useGatewayPresence) and, before any has been heard from,
// what the bench still lacks (bench-setup.ts). Shared by the page's header and its live view.
import { useRef } from 'react';
import { benchSetup, type BenchSetup } from '../../lib/bench-setup.ts';
import type { GatewayPresence } from '../../lib/client/gateway-presence.ts';
import { useGatewayPresence } from './useGatewayPresence.ts';

export interface GatewayAtRender extends GatewayPresence {
  /** When the server last heard from it, ms since the epoch; null for never. */
  lastSeenMs: number | null;
}

export function useBenchSetup(bench: string, gateways: readonly GatewayAtRender[]): { presence: readonly GatewayPresence[]; setup: BenchSetup | null } {
  const presence = useGatewayPresence(bench, gateways);
  const seenOnline = useSeenOnline(presence);
  const known = presence.map((g) => ({ ...g, lastSeenMs: gateways.find((x) => x.id === g.id)?.lastSeenMs ?? null }));
  return { presence, setup: benchSetup(known, seenOnline) };
}

/**
 * Whether any of the gateways has been online since the page opened: one that came online while
 * the page was open has been heard from, whatever the render said and whatever it does next.
 */
export function useSeenOnline(presence: readonly GatewayPresence[]): boolean {
  const seen = useRef(false);
  if (presence.some((g) => g.online)) seen.current = true;
  return seen.current;
}
