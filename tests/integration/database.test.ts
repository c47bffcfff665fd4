// The schema from nothing: migrations apply on an empty database (and again, as a no-op), the demo
// seed can run any number of times, and account rules that need a known set of admins.
import { count, eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { changeRole, setActive } from '../../src/lib/server/accounts.ts';
import type { SessionUser } from '../../src/lib/server/auth/lucia.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { auditLog, benches, users } from '../../src/lib/server/db/schema.ts';
import { DEMO_ACCOUNTS, DEMO_BENCH_ROWS, seedDemo } from '../../src/lib/server/seed.ts';
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
