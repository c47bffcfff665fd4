// A gateway's health for its page and `GET /api/v1/gateways/{gw}/health`: online state (or silent), last seen,
// recent rates, seq gaps (possible loss), rejected batches with the last reasons, broker refusals,
// and the clock offset between its bins and their arrival.
import { eq } from 'drizzle-orm';
import { gatewayIdSchema } from '../contract/wire.ts';
import { getDb, getDbHandle } from './db/index.ts';
import { unpackCounts } from './db/packed-counts.ts';
import { gatewayHealth, gateways } from './db/schema.ts';
import { presenceOf } from './gateway-presence.ts';
import { isImportGateway } from '../import-shapes.ts';

/** Rates are over the bins of this last stretch of time (ms). */
export const RATE_WINDOW_MS = 60_000;

export interface GatewayHealthView {
  id: string;
  benchId: string;
  online: boolean;
  /** Its status says online, but nothing has arrived from it for too long: when it last did, ms (else null). */
  silentSince: number | null;
  revoked: boolean;
  /** The last status payload the gateway sent (retained; its last will says offline). */
  status: { state?: string; boot?: string; channels?: string[]; software?: string; scan?: { min: number; max: number; unit: string } } | null;
  lastSeenAt: number | null;
  accepted: number;
  duplicates: number;
  rejected: number;
  refused: number;
  seqGaps: number;
  lastRejects: { at: number; reason: string }[];
  lastBoot: string | null;
  lastSeq: number | null;
  /** Arrival minus the end of the last bin, ms (positive: the data arrives that late). */
  clockOffsetMs: number | null;
  rates: {
    windowMs: number;
    batchesPerMinute: number;
    binsPerSecond: number;
    /** Counts per second per channel key, over the bins in the window. */
    countsPerSecond: Record<string, number>;
  };
}

/**
 * Batches in rows in time order. A row may join a gateway's contiguous batches of one write, named
 * by its first seq: within a boot the next row's seq says how many it held; the last row counts one.
 */
function batchesIn(rows: { boot: string; seq: number }[]): number {
  let batches = 0;
  rows.forEach((r, i) => {
    const next = rows[i + 1];
    batches += next && next.boot === r.boot && next.seq > r.seq ? next.seq - r.seq : 1;
  });
  return batches;
}

/**
 * The gateway's health, or null: for an unknown id, for an id that cannot be a gateway's (not
 * looked up), and for an imported run's pseudo-gateway (a recording has no health).
 */
export async function loadGatewayHealth(gatewayId: string, now = Date.now()): Promise<GatewayHealthView | null> {
  if (!gatewayIdSchema.safeParse(gatewayId).success || isImportGateway(gatewayId)) return null;
  const [row] = await getDb()
    .select({ g: gateways, h: gatewayHealth })
    .from(gateways)
    .leftJoin(gatewayHealth, eq(gatewayHealth.gatewayId, gateways.id))
    .where(eq(gateways.id, gatewayId))
    .limit(1);
  if (!row) return null;
  const { g, h } = row;
  const status = (g.status ?? null) as GatewayHealthView['status'];
  const presence = presenceOf(g);
  const { rows } = await getDbHandle().pool.query<{ n: number; dt: number; keys: string[]; counts: Buffer; boot: string; seq: number }>(
    'select n, dt, keys, counts, boot, seq from count_batches where gateway_id = $1 and t0 >= $2 and t0 < $3 order by t0',
    [gatewayId, now - RATE_WINDOW_MS, now],
  );
  let bins = 0;
  // Keyed by channel keys, which the gateway chooses ("__proto__", "constructor"): a Map, never a plain object.
  const sums = new Map<string, { counts: number; ms: number }>();
  for (const r of rows) {
    const counts = unpackCounts(r.counts);
    bins += r.n;
    r.keys.forEach((k, i) => {
      let s = sums.get(k);
      if (!s) sums.set(k, (s = { counts: 0, ms: 0 }));
      for (let j = 0; j < r.n; j++) s.counts += counts[i * r.n + j]!;
      s.ms += r.n * r.dt;
    });
  }
  // Object.fromEntries defines own properties, so even "__proto__" stays a plain data key.
  const countsPerSecond = Object.fromEntries([...sums].map(([k, s]) => [k, s.ms ? (s.counts * 1000) / s.ms : 0]));
  return {
    id: g.id,
    benchId: g.benchId,
    online: presence.online,
    silentSince: presence.silentSince ?? null,
    revoked: !!g.revokedAt,
    status,
    lastSeenAt: g.lastSeenAt ? g.lastSeenAt.getTime() : null,
    accepted: h?.accepted ?? 0,
    duplicates: h?.duplicates ?? 0,
    rejected: h?.rejected ?? 0,
    refused: h?.refused ?? 0,
    seqGaps: h?.seqGaps ?? 0,
    lastRejects: (h?.lastRejects ?? []) as { at: number; reason: string }[],
    lastBoot: h?.lastBoot ?? null,
    lastSeq: h?.lastSeq ?? null,
    clockOffsetMs: h?.clockOffsetMs ?? null,
    rates: {
      windowMs: RATE_WINDOW_MS,
      batchesPerMinute: (batchesIn(rows) * 60_000) / RATE_WINDOW_MS,
      binsPerSecond: (bins * 1000) / RATE_WINDOW_MS,
      countsPerSecond,
    },
  };
}
