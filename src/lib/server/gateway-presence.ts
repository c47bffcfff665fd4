// Whether a gateway reads online, one rule for pages, the API and commands: its latest status says
// online, it is not revoked, and it has not fallen silent (nothing heard from it for too long,
// ingest/silence.ts). The live pages then follow `status` messages that carry the same.
import type { GatewayPresence } from '../client/gateway-presence.ts';
import { runtime } from './runtime.ts';

export function presenceOf(g: { id: string; status: unknown; revokedAt: Date | null }): GatewayPresence {
  const s = g.status;
  const claimed = !g.revokedAt && typeof s === 'object' && s !== null && 'state' in s && s.state === 'online';
  const silentSince = claimed ? (runtime().gatewaySilence?.silentSince(g.id) ?? null) : null;
  return silentSince === null ? { id: g.id, online: claimed } : { id: g.id, online: false, silentSince };
}
