// The bench's coincidence window end to end: the admin form refuses a bad window and stores nothing,
// stores a good one with an audit row, and the live analysis computes g2(0)'s accidentals with the
// new window from its next figures on (no restart, no wait for the settings to expire).
import { and, desc, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { benchFiguresSchema, type BenchFigures } from '../../src/lib/bench-figures-schema.ts';
import type { LiveMessage } from '../../src/lib/live-messages.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { auditLog, benches } from '../../src/lib/server/db/schema.ts';
import type { RunningApp } from '../../src/server/app.ts';
import { HttpClient } from '../helpers/http-client.ts';
import { connectGateway, freshGateway, makeBatch, openLive, publishBatch } from '../helpers/live-path.ts';
import { resetSignInLimits, startWebApp, userWithToken } from '../helpers/web-app.ts';

let app: RunningApp;
let admin: HttpClient;
let adminToken: string;

beforeAll(async () => {
  app = await startWebApp();
  resetSignInLimits();
  const a = await userWithToken('admin', 'window-admin');
  adminToken = a.token;
  admin = new HttpClient(app.url);
  expect((await admin.signIn(a.email, a.password)).status).toBe(303);
});
afterAll(async () => {
  await app?.close();
});

const windowOf = async (benchId: string) => (await getDb().select({ cw: benches.coincidenceWindowNs }).from(benches).where(eq(benches.id, benchId)))[0]?.cw;

describe('coincidence window', () => {
  it('refuses a bad window with the reason and stores nothing', async () => {
    const { benchId } = await freshGateway();
    const page = await admin.get(`/admin/benches/${benchId}`);
    expect(page.text).toContain('id="coincidenceWindowNs"');
    for (const [value, reason] of [
      ['0', 'below 0.01 ns'],
      ['-2', 'below 0.01 ns'],
      ['1500', 'above 1000 ns'],
      ['abc', 'Coincidence window (ns): enter a number with a decimal point, such as 0.8'],
      ['0,5', 'Coincidence window (ns): enter a number with a decimal point, such as 0.8'],
      ['', 'Coincidence window (ns): enter a number'],
    ] as const) {
      const res = await admin.postForm(`/admin/benches/${benchId}`, { intent: 'coincidence', coincidenceWindowNs: value });
      expect(res.status, value).toBe(422);
      expect(res.text).toContain(reason);
    }
    expect(await windowOf(benchId)).toBe(2);
    expect(await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'bench'), eq(auditLog.entityId, benchId), eq(auditLog.action, 'update_coincidence_window')))).toEqual([]);
  });

  it('stores a good window, and the live g2(0) uses it from the next figures on', async () => {
    const gw = await freshGateway();
    const live = await openLive(app.url, gw.benchId, adminToken);
    const client = await connectGateway(app.mqttPort!, gw.gatewayId, gw.token);
    // One second of singles and coincidences: the figures' 10 s window holds exactly this batch
    // before and after the change, so only the window can move the accidentals.
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 2000;
    await publishBatch(client, gw.gatewayId, { ...makeBatch(t0, 100, 0, { value: () => 1000 }), cc: Array.from({ length: 100 }, () => 3) });
    await client.endAsync();

    // Figures messages are the project's own type, outside LiveMessage: read them through their schema.
    const figuresOf = (m: LiveMessage): BenchFigures | null => {
      const o = m as unknown as { type: string; figures?: unknown };
      const f = o.type === 'figures' ? benchFiguresSchema.safeParse(o.figures) : null;
      return f?.success ? f.data : null;
    };
    // 4 s: well inside the settings' 10 s reload period, so only the change event can explain it.
    const figuresWith = async (ns: number) => figuresOf(await live.next((m) => figuresOf(m)?.coincidenceWindowNs === ns && figuresOf(m)?.g2 != null, 4_000))!;
    const before = await figuresWith(2);
    // N_a·N_b·τ_c/T with 10⁵ counts each in 1 s.
    expect(before.g2!.accidentals).toBeCloseTo(1e5 * 1e5 * 2e-9, 9);

    const saved = await admin.postForm(`/admin/benches/${gw.benchId}`, { intent: 'coincidence', coincidenceWindowNs: '8' });
    expect(saved.status).toBe(200);
    expect(saved.text).toContain('Coincidence window saved');
    expect(await windowOf(gw.benchId)).toBe(8);
    const [audit] = await getDb().select().from(auditLog).where(and(eq(auditLog.entity, 'bench'), eq(auditLog.entityId, gw.benchId))).orderBy(desc(auditLog.id)).limit(1);
    expect(audit).toMatchObject({ action: 'update_coincidence_window', before: { coincidenceWindowNs: 2 }, after: { coincidenceWindowNs: 8 } });

    const after = await figuresWith(8);
    expect(after.g2!.accidentals).toBeCloseTo(4 * before.g2!.accidentals, 9);
    expect(after.g2!.value).toBeCloseTo(before.g2!.value / 4, 9);
    live.ws.close();
  });
});
