// Benches and their channels: reads for pages and the API, and the channel-role defaults of the
// contract (first two keys of the first gateway serve as out_a/out_b until an admin sets roles).
import { asc, eq, inArray } from 'drizzle-orm';
import { benchIdSchema } from '../contract/wire.ts';
import { importGatewayOf, isImportGateway } from '../import-shapes.ts';
import { getDb, getDbHandle } from './db/index.ts';
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
  return (await channelsOfBenches([benchId])).get(benchId) ?? [];
}

/** `benchChannels` of several benches in two queries, whatever their number (the lab overview's sparklines). */
export async function channelsOfBenches(benchIds: readonly string[]): Promise<Map<string, BenchChannel[]>> {
  const db = getDb();
  const ids = [...benchIds];
  if (!ids.length) return new Map();
  const [gws, rows] = await Promise.all([
    db.select({ id: gateways.id, benchId: gateways.benchId }).from(gateways).where(inArray(gateways.benchId, ids)).orderBy(asc(gateways.createdAt), asc(gateways.id)),
    db.select().from(channels).where(inArray(channels.benchId, ids)),
  ]);
  return new Map(
    ids.map((benchId) => {
      const mine = gws.filter((g) => g.benchId === benchId);
      // Imported runs' pseudo-gateways last: the bench's first live gateway keeps the default roles.
      const order = [...mine.filter((g) => !isImportGateway(g.id)), ...mine.filter((g) => isImportGateway(g.id))];
      return [benchId, effectiveRoles(rows.filter((r) => r.benchId === benchId), order.map((g) => g.id))];
    }),
  );
}

/** The bench's channels in role order with their corrections (dark rate, dead time, efficiency). */
export async function benchCalibrations(benchId: string): Promise<ChannelCalibration[]> {
  const roles = await benchChannels(benchId);
  const rows = await getDb().select().from(channels).where(eq(channels.benchId, benchId));
  return withCorrections(roles, rows);
}

/**
 * An imported run's own channels in role order. Its recording stands alone, so its first two keys
 * are its outputs (the contract's default, as its fit takes them: `fitStored`), whatever the
 * bench's live gateways hold.
 */
export async function importCalibrations(gatewayId: string): Promise<ChannelCalibration[]> {
  const rows = await getDb().select().from(channels).where(eq(channels.gatewayId, gatewayId));
  return withCorrections(effectiveRoles(rows, [gatewayId]), rows);
}

function withCorrections(roles: BenchChannel[], rows: Channel[]): ChannelCalibration[] {
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

/**
 * `<gateway>/<key>` of the bench's channels with at least one bin in [from, to). Exports and run
 * reports show these only: every import adds channels to its bench, and listing them all would
 * fill each later export with empty columns (which a re-import cannot tell apart) and each report
 * with other recordings' outputs. Per channel the search starts at the gateway's last batch
 * starting at or before `from` (batches of a gateway never overlap), so it walks the primary key
 * over the range only, and stops at the first batch holding the key. Past raw retention a slot of
 * the 1 s or 1 min sums with bins in the range counts too: the report still draws the run's rates
 * and stability from them.
 */
export async function channelsWithData(benchId: string, fromMs: number, toMs: number): Promise<Set<string>> {
  const { rows } = await getDbHandle().pool.query<{ gateway_id: string; key: string }>(
    `select c.gateway_id, c.key from channels c
      where c.bench_id = $1 and (exists (
        select 1 from count_batches b
         where b.gateway_id = c.gateway_id
           and b.t0 >= coalesce((select max(p.t0) from count_batches p where p.gateway_id = c.gateway_id and p.t0 <= $2), $2)
           and b.t0 < $3 and b.t1 > $2 and c.key = any(b.keys))
      or exists (
        select 1 from rollups r
         where r.gateway_id = c.gateway_id and r.key = c.key and r.step_ms in (1000, 60000)
           and r.block_t0 > $2::int8 - 3600000 and r.block_t0 < $3
           and exists (select 1 from unnest(r.bins) with ordinality u(n, i)
                        where u.n > 0 and r.block_t0 + (u.i - 1) * r.step_ms >= $2 and r.block_t0 + (u.i - 1) * r.step_ms < $3)))`,
    [benchId, fromMs, toMs],
  );
  return new Set(rows.map((r) => `${r.gateway_id}/${r.key}`));
}

/**
 * The channels with bins in [from, to) with their corrections, in role order. Given a run that was
 * imported, its own channels come first with their own roles (`importCalibrations`); a live run
 * has no such channels and keeps the bench's.
 */
export async function calibrationsWithData(benchId: string, fromMs: number, toMs: number, runId: number | null): Promise<ChannelCalibration[]> {
  const [bench, own, data] = await Promise.all([
    benchCalibrations(benchId),
    runId === null ? Promise.resolve([]) : importCalibrations(importGatewayOf(runId)),
    channelsWithData(benchId, fromMs, toMs),
  ]);
  const id = (c: ChannelCalibration) => `${c.gateway}/${c.key}`;
  const ownIds = new Set(own.map(id));
  return [...own, ...bench.filter((c) => !ownIds.has(id(c)))].filter((c) => data.has(id(c)));
}
