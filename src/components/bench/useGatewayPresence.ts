// A bench's gateways and whether each is online, following the live socket (gateway-presence.ts).
// The server's render and hydration use `initial`, so both produce the same markup.
import { useSyncExternalStore } from 'react';
import { BENCH_FEED, gatewayPresence, type GatewayPresence, type PresenceFeed } from '../../lib/client/gateway-presence.ts';

export function useGatewayPresence(bench: string, initial: readonly GatewayPresence[], feed: PresenceFeed = BENCH_FEED): readonly GatewayPresence[] {
  // The store is per browser tab: never made while rendering on the server, where it would be shared by every request.
  const store = typeof window === 'undefined' ? null : gatewayPresence(bench, initial, feed);
  return useSyncExternalStore(store?.subscribe ?? noSubscribe, store?.get ?? (() => initial), () => initial);
}

function noSubscribe(): () => void {
  return () => undefined;
}
