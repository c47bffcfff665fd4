// The schema from nothing: migrations apply on an empty database (and again, as a no-op), the demo
// seed can run any number of times (its corrections and alarm rules written once, an admin's
// later edits kept), and account rules that need a known set of admins.
import { asc, count, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { changeRole, setActive } from '../../src/lib/server/accounts.ts';
import type { SessionUser } from '../../src/lib/server/auth/lucia.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { deleteRule, updateRule } from '../../src/lib/server/alarms/rules.ts';
import { updateChannel } from '../../src/lib/server/bench-admin.ts';
import { alarmRules, auditLog, benches, channels, users } from '../../src/lib/server/db/schema.ts';
import { DEMO_ALARM_RULES } from '../../src/lib/server/seed-lab-settings.ts';
import { DEMO_ACCOUNTS, DEMO_BENCH_ROWS, seedDemo } from '../../src/lib/server/seed.ts';
import { DEMO_BENCHES } from '../../simulators/demo-benches.ts';
import { demoCalibrations } from '../../simulators/demo-calibrations.ts';
import { createUser } from '../../src/lib/server/users.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';

let db: FreshDatabase;
beforeAll(async () => {
  db = await useFreshDatabase('schema');
});
afterAll(async () => {
  await db?.restore();
});

async function tableNames(): Promise<string[]> {
  const res = await getDb().execute<{ table_name: string }>(
    "select table_name from information_schema.tables where table_schema = 'public' order by table_name",
  );
  return res.rows.map((r) => r.table_name);
}

describe('an empty database', () => {
  it('gets every table from the committed migrations, and a second run changes nothing', async () => {
    expect(await tableNames()).toEqual([]);
    await migrateDatabase();
    const tables = await tableNames();
    for (const t of ['users', 'sessions', 'api_tokens', 'one_time_links', 'benches', 'gateways', 'channels', 'audit_log', 'caught_mail']) expect(tables).toContain(t);
    await migrateDatabase();
    expect(await tableNames()).toEqual(tables);
  });

  it('is seeded once however often the seed runs', async () => {
    await seedDemo();
    await seedDemo();
    const [u] = await getDb().select({ n: count() }).from(users);
    const [b] = await getDb().select({ n: count() }).from(benches);
    expect(u!.n).toBe(DEMO_ACCOUNTS.length);
    expect(b!.n).toBe(DEMO_BENCH_ROWS.length);
    await seedDemo();
    const [u2] = await getDb().select({ n: count() }).from(users);
    expect(u2!.n).toBe(DEMO_ACCOUNTS.length);
  });

  it('gives the demo channels their measured corrections and the benches their alarm rules, once', async () => {
    const corrections = async () => (await getDb().select().from(channels).orderBy(asc(channels.gatewayId), asc(channels.key))).map(({ createdAt: _c, ...c }) => c);
    const rules = async () => (await getDb().select().from(alarmRules).orderBy(asc(alarmRules.id))).map(({ createdAt: _c, updatedAt: _u, ...r }) => r);
    for (const b of DEMO_BENCHES) {
      for (const [key, cal] of demoCalibrations(b)) {
        const [row] = await getDb().select().from(channels).where(eq(channels.gatewayId, b.gateway)).then((rows) => rows.filter((r) => r.key === key));
        expect(row, `${b.gateway}/${key}`).toMatchObject({ darkRate: cal.darkRate, darkRateErr: cal.darkRateErr, deadTimeNs: cal.deadTimeNs, deadTimeModel: 'nonparalyzable', efficiency: cal.efficiency });
      }
      expect((await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, b.id))).map((r) => r.name)).toEqual(DEMO_ALARM_RULES[b.id]!.map((r) => r.name));
    }
    // The InGaAs bench's darks and dead time are the large ones the review missed.
    expect((await corrections()).find((c) => c.gatewayId === 'gw-1550' && c.key === 'a')).toMatchObject({ darkRate: 614.3, darkRateErr: 3.2, deadTimeNs: 10_000 });

    // An admin clears one channel's corrections, edits one rule and deletes another bench's only
    // rules; the benches have still recorded nothing (no simulated gateways), yet a later seed
    // restores none of it.
    const [row] = await getDb().select().from(users).where(eq(users.email, 'admin@lab.example'));
    const admin: SessionUser = { id: row!.id, email: row!.email, name: row!.name, role: 'admin' };
    await updateChannel(admin, 'mz-633', { gatewayId: 'gw-633', key: 'a', label: 'Output A', role: 'out_a', darkRate: '', darkRateErr: '', deadTimeNs: '', deadTimeModel: 'nonparalyzable', efficiency: '1' });
    const [fibre, ...fibreRest] = await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, 'mz-1550')).orderBy(asc(alarmRules.id));
    await updateRule('mz-1550', fibre!.id, { ...DEMO_ALARM_RULES['mz-1550']![0]!, threshold: 40_000, clearThreshold: 30_000, holdSeconds: 0, severity: 'critical', recipients: [], enabled: true, channel: null }, admin.id);
    for (const r of fibreRest) await deleteRule('mz-1550', r.id, admin.id);
    for (const r of await getDb().select().from(alarmRules).where(eq(alarmRules.benchId, 'mz-810'))) await deleteRule('mz-810', r.id, admin.id);
    const edited = { corrections: await corrections(), rules: await rules() };
    expect(edited.corrections.find((c) => c.gatewayId === 'gw-633' && c.key === 'a')).toMatchObject({ darkRate: null, deadTimeNs: null });
    await seedDemo();
    await seedDemo();
    expect({ corrections: await corrections(), rules: await rules() }).toEqual(edited);
  });
});

describe('the last active admin', () => {
  it('cannot demote or deactivate themselves; with a second admin they can', async () => {
    const [row] = await getDb().select().from(users).where(eq(users.email, 'admin@lab.example'));
    const me: SessionUser = { id: row!.id, email: row!.email, name: row!.name, role: 'admin' };
    await expect(changeRole(me, me.id, 'operator')).rejects.toThrow(/at least one active admin/);
    await expect(setActive(me, me.id, false)).rejects.toThrow(/at least one active admin/);
    expect((await getDb().select().from(users).where(eq(users.id, me.id)))[0]).toMatchObject({ role: 'admin', active: true });

    // A deactivated admin does not count.
    const idle = await createUser({ email: 'idle-admin@test.example', role: 'admin', password: 'idle-admin-password' });
    await setActive(me, idle.id, false);
    await expect(changeRole(me, me.id, 'observer')).rejects.toThrow(/at least one active admin/);

    await setActive(me, idle.id, true);
    const demoted = await changeRole(me, me.id, 'operator');
    expect(demoted.role).toBe('operator');
    const log = await getDb().select().from(auditLog).where(eq(auditLog.entityId, me.id));
    expect(log.map((r) => r.action)).toEqual(['change_role']);
  });
});
