// How a gateway's presence reads beside its name, on the bench header and the lab overview's cards.
import type { GatewayPresence } from '../../lib/client/gateway-presence.ts';
import { formatPastMoment } from '../../lib/client/format.ts';

/** "online", "offline", or "silent since 14:05:12" (the time once mounted: the server's clock and zone are not the reader's). */
export function gatewayStateText(g: GatewayPresence, now: number | null): string {
  if (g.online) return 'online';
  if (g.silentSince === undefined) return 'offline';
  return now === null ? 'silent' : `silent since ${formatPastMoment(g.silentSince, now)}`;
}

export function gatewayStateTone(g: GatewayPresence): string {
  return g.online ? 'text-good' : g.silentSince !== undefined ? 'text-warn' : 'text-bad';
}
