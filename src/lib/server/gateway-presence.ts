// Whether a gateway reads online, one rule for pages, the API and commands: its latest status says
// online, it is not revoked, and it has not fallen silent (nothing heard from it for too long,
// ingest/silence.ts). The live pages then follow `status` messages that carry the same.
import { asc, inArray } from 'drizzle-orm';
import type { GatewayPresence } from '../client/gateway-presence.ts';
import { isImportGateway } from '../import-shapes.ts';
import { getDb } from './db/index.ts';
import { gateways } from './db/schema.ts';
import { runtime } from './runtime.ts';

export function presenceOf(g: { id: string; status: unknown; revokedAt: Date | null }): GatewayPresence {
  const s = g.status;
  const claimed = !g.revokedAt && typeof s === 'object' && s !== null && 'state' in s && s.state === 'online';
  const silentSince = claimed ? (runtime().gatewaySilence?.silentSince(g.id) ?? null) : null;
  return silentSince === null ? { id: g.id, online: claimed } : { id: g.id, online: false, silentSince };
}

/** The gateways of each bench with whether they are online, oldest first, in one query (imported runs' pseudo-gateways are no devices). */
export async function presenceOfBenches(benchIds: readonly string[]): Promise<Map<string, GatewayPresence[]>> {
  const out = new Map(benchIds.map((b) => [b, [] as GatewayPresence[]]));
  if (!benchIds.length) return out;
  const rows = await getDb()
    .select({ id: gateways.id, benchId: gateways.benchId, status: gateways.status, revokedAt: gateways.revokedAt })
    .from(gateways)
    .where(inArray(gateways.benchId, [...benchIds]))
    .orderBy(asc(gateways.createdAt), asc(gateways.id));
  for (const g of rows) if (!isImportGateway(g.id)) out.get(g.benchId)?.push(presenceOf(g));
  return out;
}
