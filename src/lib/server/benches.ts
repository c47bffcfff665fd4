// Benches and their channels: reads for pages and the API, and the channel-role defaults of the
// contract (first two keys of the first gateway serve as out_a/out_b until an admin sets roles).
import { asc, eq } from 'drizzle-orm';
import { benchIdSchema } from '../contract/wire.ts';
import { isImportGateway } from '../import-shapes.ts';
import { getDb } from './db/index.ts';
import type { ChannelCalibration, ChannelRole } from '../channel-calibration.ts';
import { benches, channels, gateways, type Bench, type Channel } from './db/schema.ts';

export type { ChannelRole };

export interface BenchChannel {
  gateway: string;
  key: string;
  label: string;
  role: ChannelRole;
}

export async function listBenches(): Promise<Bench[]> {
  return await getDb().select().from(benches).orderBy(asc(benches.name));
}

/** The bench, or null when there is none; an id that cannot be a bench's (a NUL, a slash) is not looked up. */
export async function getBench(id: string): Promise<Bench | null> {
  if (!benchIdSchema.safeParse(id).success) return null;
  const [row] = await getDb().select().from(benches).where(eq(benches.id, id)).limit(1);
  return row ?? null;
}

/** Assigns effective roles: explicit ones win; otherwise the contract's default for the first gateway. */
export function effectiveRoles(rows: Pick<Channel, 'gatewayId' | 'key' | 'label' | 'role'>[], gatewayOrder: string[]): BenchChannel[] {
  const sorted = [...rows].sort((a, b) => {
    const ga = gatewayOrder.indexOf(a.gatewayId);
    const gb = gatewayOrder.indexOf(b.gatewayId);
    return ga !== gb ? ga - gb : a.key < b.key ? -1 : a.key > b.key ? 1 : 0;
  });
  const explicit = new Set(sorted.filter((c) => c.role === 'out_a' || c.role === 'out_b').map((c) => c.role));
  const firstGw = gatewayOrder[0];
  const firstKeys = sorted.filter((c) => c.gatewayId === firstGw && !c.role).map((c) => c.key);
  return sorted.map((c) => {
    let role: ChannelRole = c.role ?? 'aux';
    if (!c.role && explicit.size === 0 && c.gatewayId === firstGw) {
      if (c.key === firstKeys[0]) role = 'out_a';
      else if (c.key === firstKeys[1]) role = 'out_b';
    }
    return { gateway: c.gatewayId, key: c.key, label: c.label || c.key, role };
  });
}

export async function benchChannels(benchId: string): Promise<BenchChannel[]> {
  const db = getDb();
  const gws = await db.select({ id: gateways.id }).from(gateways).where(eq(gateways.benchId, benchId)).orderBy(asc(gateways.createdAt), asc(gateways.id));
  const rows = await db.select().from(channels).where(eq(channels.benchId, benchId));
  // Imported runs' pseudo-gateways last: the bench's first live gateway keeps the default roles.
  const order = [...gws.filter((g) => !isImportGateway(g.id)), ...gws.filter((g) => isImportGateway(g.id))];
  return effectiveRoles(rows, order.map((g) => g.id));
}

/** The bench's channels in role order with their corrections (dark rate, dead time, efficiency). */
export async function benchCalibrations(benchId: string): Promise<ChannelCalibration[]> {
  const roles = await benchChannels(benchId);
  const rows = await getDb().select().from(channels).where(eq(channels.benchId, benchId));
  return roles.map((c) => {
    const row = rows.find((r) => r.gatewayId === c.gateway && r.key === c.key);
    return {
      ...c,
      darkRate: row?.darkRate ?? null,
      darkRateErr: row?.darkRateErr ?? null,
      deadTimeNs: row?.deadTimeNs ?? null,
      deadTimeModel: row?.deadTimeModel ?? 'nonparalyzable',
      efficiency: row?.efficiency ?? 1,
    };
  });
}
