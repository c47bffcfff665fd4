// `GET /api/v1/overview`: what the lab overview re-reads, for every bench the caller may read in
// one answer, each bench's counts the same as its own counts endpoint answers (read from the
// rollups once for all benches), and its open alarms. Callers who may read nothing get nothing.
// `GET /api/v1/overview/benches?bench=`: the cards of benches the page learnt of after its render.
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { insertRaised } from '../../src/lib/server/alarms/event-store.ts';
import { createRule, ruleInputSchema } from '../../src/lib/server/alarms/rules.ts';
import { listBenches } from '../../src/lib/server/benches.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { rollups, users } from '../../src/lib/server/db/schema.ts';
import { loadOverview } from '../../src/lib/server/overview.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { connectGateway, freshGateway, makeBatch, publishBatch, until } from '../helpers/live-path.ts';
import { startWebApp, userWithToken } from '../helpers/web-app.ts';

let app: RunningApp;
let token: string;
// Ten minutes ago on a minute boundary, in 1 s bins written through the live path (rows and rollups).
const BASE = Math.floor(Date.now() / 60_000) * 60_000 - 600_000;
const SPAN = { from: BASE, to: BASE + 600_000, step: 5000 };
const benchA = { benchId: '', gatewayId: '' };
const benchB = { benchId: '', gatewayId: '' };

type Answer = { benches: { id: string; counts: Record<string, unknown>; openAlarms: { id: number; benchId: string; severity: string }[] }[] };

async function get(path: string, bearer = token): Promise<Response> {
  return await fetch(new URL(path, app.url), { headers: { authorization: `Bearer ${bearer}`, accept: 'application/json' } });
}

function query(q: Record<string, number | string>): string {
  return new URLSearchParams(Object.entries(q).map(([k, v]) => [k, String(v)])).toString();
}

beforeAll(async () => {
  app = await startWebApp();
  token = (await userWithToken('observer', 'overview')).token;
  for (const [bench, scale] of [[benchA, 1], [benchB, 3]] as const) {
    const gw = await freshGateway();
    Object.assign(bench, gw);
    const client = await connectGateway(app.mqttPort!, gw.gatewayId, gw.token);
    for (let k = 0; k < 3; k++) await publishBatch(client, gw.gatewayId, makeBatch(BASE + k * 60_000, 60, k, { dt: 1000, value: (key, i) => scale * (key === 'a' ? 100 + i : 50) }));
    await until(async () => (await getDb().select({ g: rollups.gatewayId }).from(rollups).where(eq(rollups.gatewayId, gw.gatewayId))).length > 0, 10_000, 'rollups');
    await client.endAsync();
  }
  const rule = await createRule(benchB.benchId, ruleInputSchema.parse({ name: 'Overview test', metric: 'rate_low', threshold: 1, clearThreshold: 2, enabled: true }), null);
  await insertRaised({ ruleId: rule.id, ruleName: rule.name, metric: rule.metric, benchId: benchB.benchId, subject: `${benchB.gatewayId}/a`, severity: 'critical', message: 'low', value: 0, at: Date.now() });
});
afterAll(async () => {
  await app?.close();
});

describe('GET /api/v1/overview', () => {
  it('answers for every readable bench at once, each as its own endpoints answer', async () => {
    const res = await get(`/api/v1/overview?${query(SPAN)}`);
    expect(res.status).toBe(200);
    const body = (await res.json()) as Answer;
    expect(body.benches.map((b) => b.id).sort()).toEqual((await listBenches()).map((b) => b.id).sort());
    for (const bench of [benchA, benchB]) {
      const mine = body.benches.find((b) => b.id === bench.benchId)!;
      const own = await get(`/api/v1/benches/${bench.benchId}/counts?${query(SPAN)}`);
      expect(mine.counts).toEqual(await own.json());
      const alarms = await get(`/api/v1/benches/${bench.benchId}/alarms?open=1`);
      expect(mine.openAlarms).toEqual(await alarms.json());
    }
    const a = body.benches.find((b) => b.id === benchA.benchId)!.counts as { resolution: string; channels: Record<string, (number | null)[]> };
    expect(a.resolution).toBe('1s');
    // The first 5 s bucket of bench A's channel a: 100 + 101 + … + 104 (makeBatch's values).
    expect(a.channels[`${benchA.gatewayId}/a`]![0]).toBe(510);
    expect(body.benches.find((b) => b.id === benchB.benchId)!.openAlarms).toMatchObject([{ benchId: benchB.benchId, severity: 'critical' }]);
  });

  it('refuses callers who may read no bench, and asks for a step the rollups serve', async () => {
    const res = await fetch(new URL(`/api/v1/overview?${query(SPAN)}`, app.url));
    expect(res.status).toBe(401);
    const gone = await userWithToken('observer', 'overview-gone');
    await getDb().update(users).set({ active: false }).where(eq(users.id, gone.id));
    expect((await get(`/api/v1/overview?${query(SPAN)}`, gone.token)).status).toBe(401);
    expect((await get(`/api/v1/overview?${query({ ...SPAN, step: 500 })}`)).status).toBe(422);
    expect((await get(`/api/v1/overview?${query({ ...SPAN, step: 1000, to: BASE + 86_400_000 })}`)).status).toBe(422);
    expect((await get(`/api/v1/overview?${query({ ...SPAN, to: SPAN.from })}`)).status).toBe(422);
  });
});

describe('GET /api/v1/overview/benches', () => {
  it('answers the benches named as the overview renders them, leaving out one that does not exist', async () => {
    const res = await get(`/api/v1/overview/benches?bench=${benchB.benchId}&bench=no-such-bench`);
    expect(res.status).toBe(200);
    const body = (await res.json()) as { benches: Record<string, unknown>[] };
    const rendered = (await loadOverview()).find((b) => b.id === benchB.benchId);
    expect(body.benches).toEqual([JSON.parse(JSON.stringify(rendered))]);
    expect(body.benches[0]).toMatchObject({ name: 'Test bench', gateways: [{ id: benchB.gatewayId, online: false }], gatewaysEverSeen: 1, openAlarms: 1, criticalAlarms: 1 });
    expect((await get('/api/v1/overview/benches')).status).toBe(422);
    expect((await get(`/api/v1/overview/benches?${Array.from({ length: 101 }, (_, i) => `bench=b-${i}`).join('&')}`)).status).toBe(422);
  });
});
