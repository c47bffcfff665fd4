// Which bench each gateway feeds, cached: the fan-out needs it for every stored batch and a database
// round trip per batch would cost more than the batch. Entries expire so a reassignment shows up.
import { eq } from 'drizzle-orm';
import { getDb } from '../db/index.ts';
import { gateways } from '../db/schema.ts';
import { withDbRetry } from './db-retry.ts';

const TTL_MS = 30_000;

export class GatewayDirectory {
  private cache = new Map<string, { benchId: string | null; until: number }>();

  remember(gatewayId: string, benchId: string): void {
    this.cache.set(gatewayId, { benchId, until: Date.now() + TTL_MS });
  }

  forget(gatewayId: string): void {
    this.cache.delete(gatewayId);
  }

  /** The gateway's bench, or null for a gateway that does not exist (external broker mode). */
  async benchOf(gatewayId: string): Promise<string | null> {
    const hit = this.cache.get(gatewayId);
    if (hit && hit.until > Date.now()) return hit.benchId;
    const [row] = await withDbRetry('gateway lookup', () => getDb().select({ benchId: gateways.benchId }).from(gateways).where(eq(gateways.id, gatewayId)).limit(1));
    const benchId = row?.benchId ?? null;
    this.cache.set(gatewayId, { benchId, until: Date.now() + TTL_MS });
    return benchId;
  }

  /** Synchronous lookup for the fan-out, which runs right after a write the gateway was checked for. */
  cached(gatewayId: string): string | null {
    return this.cache.get(gatewayId)?.benchId ?? null;
  }
}
