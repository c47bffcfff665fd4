// Loads what a bench page needs in one place, so the pages stay thin and the islands get plain data.
import { and, asc, eq } from 'drizzle-orm';
import type { BenchViewData, ViewChannel } from '../bench-view.ts';
import { benchChannels, getBench } from './benches.ts';
import { getDb } from './db/index.ts';
import { alarmRules, channels, gateways } from './db/schema.ts';
import { presenceOf } from './gateway-presence.ts';
import { activeRuns } from './runs.ts';
import { statusSchema } from '../contract/wire.ts';
import { isImportGateway } from '../import-shapes.ts';

/** Only the scan range of a stored status; the rest of it is the health page's business. */
const storedScanSchema = statusSchema.pick({ scan: true });

/**
 * The bench as its pages show it. Imported runs are stored under pseudo-gateways of the bench:
 * they are never listed as gateways (no device, no health), and their channels are left out where
 * `imports` is 'exclude' (the live page: a recording is not a live output) and kept for pages that
 * read the past (history, run reports).
 */
export async function loadBenchView(benchId: string, opts: { imports: 'include' | 'exclude' }): Promise<BenchViewData | null> {
  const bench = await getBench(benchId);
  if (!bench) return null;
  const db = getDb();
  const [roles, calib, gws, limits, active] = await Promise.all([
    benchChannels(benchId),
    db.select().from(channels).where(eq(channels.benchId, benchId)),
    db.select().from(gateways).where(eq(gateways.benchId, benchId)).orderBy(asc(gateways.createdAt), asc(gateways.id)),
    db
      .select({ threshold: alarmRules.threshold })
      .from(alarmRules)
      .where(and(eq(alarmRules.benchId, benchId), eq(alarmRules.metric, 'visibility_low'), eq(alarmRules.enabled, true))),
    activeRuns(),
  ]);
  const chans: ViewChannel[] = roles.filter((c) => opts.imports === 'include' || !isImportGateway(c.gateway)).map((c) => {
    const cal = calib.find((r) => r.gatewayId === c.gateway && r.key === c.key);
    return {
      id: `${c.gateway}/${c.key}`,
      gateway: c.gateway,
      key: c.key,
      label: c.label,
      role: c.role,
      darkRate: cal?.darkRate ?? null,
      deadTimeNs: cal?.deadTimeNs ?? null,
    };
  });
  const byRole = (r: ViewChannel['role']) => chans.find((c) => c.role === r)?.id ?? null;
  return {
    id: bench.id,
    name: bench.name,
    wavelengthNm: bench.wavelengthNm,
    drive: { min: bench.driveMin, max: bench.driveMax, maxStep: bench.driveMaxStep, minDwellMs: bench.driveMinDwellMs },
    channels: chans,
    outA: byRole('out_a'),
    outB: byRole('out_b'),
    herald: byRole('herald'),
    gateways: gws.filter((g) => !isImportGateway(g.id)).map((g) => {
      const scan = storedScanSchema.safeParse(g.status ?? {});
      return { ...presenceOf(g), lastSeenMs: g.lastSeenAt ? g.lastSeenAt.getTime() : null, scan: scan.success ? (scan.data.scan ?? null) : null };
    }),
    // Several rules: the strictest (highest) limit is the one the trend must stay above.
    visibilityLimit: limits.length ? Math.max(...limits.map((l) => l.threshold)) : null,
    activeRun: active.get(benchId) ?? null,
  };
}
