// What the lab overview shows per bench: gateways online, open alarms, who is running what, and
// the live figures the analysis holds in memory, so the page shows them without asking for each.
import { asc, count, isNull } from 'drizzle-orm';
import type { OverviewBench } from '../overview.ts';
import { listBenches } from './benches.ts';
import { getDb } from './db/index.ts';
import { alarmEvents, gateways } from './db/schema.ts';
import { presenceOf } from './gateway-presence.ts';
import { runtime } from './runtime.ts';
import { activeRuns } from './runs.ts';
import { isImportGateway } from '../import-shapes.ts';

/** Every bench, by name; `only`: just those of these ids (benches the page learnt of after its render). */
export async function loadOverview(only?: readonly string[]): Promise<OverviewBench[]> {
  const db = getDb();
  const wanted = only && new Set(only);
  const [benchRows, gws, alarms, runs] = await Promise.all([
    listBenches().then((rows) => (wanted ? rows.filter((b) => wanted.has(b.id)) : rows)),
    db
      .select({ id: gateways.id, benchId: gateways.benchId, status: gateways.status, revokedAt: gateways.revokedAt, lastSeenAt: gateways.lastSeenAt })
      .from(gateways)
      .orderBy(asc(gateways.createdAt), asc(gateways.id)),
    db
      .select({ benchId: alarmEvents.benchId, severity: alarmEvents.severity, n: count() })
      .from(alarmEvents)
      .where(isNull(alarmEvents.clearedAt))
      .groupBy(alarmEvents.benchId, alarmEvents.severity),
    activeRuns(),
  ]);
  const analysis = runtime().analysis;
  return benchRows.map((b) => {
    // Imported runs' pseudo-gateways are recordings, not devices that can be online.
    const mine = gws.filter((g) => g.benchId === b.id && !isImportGateway(g.id));
    const open = alarms.filter((a) => a.benchId === b.id);
    return {
      id: b.id,
      name: b.name,
      wavelengthNm: b.wavelengthNm,
      description: b.description,
      gateways: mine.map(presenceOf),
      gatewaysEverSeen: mine.filter((g) => g.lastSeenAt !== null).length,
      openAlarms: open.reduce((s, a) => s + a.n, 0),
      criticalAlarms: open.filter((a) => a.severity === 'critical').reduce((s, a) => s + a.n, 0),
      activeRun: runs.get(b.id) ?? null,
      figures: analysis?.figures(b.id) ?? null,
    };
  });
}

