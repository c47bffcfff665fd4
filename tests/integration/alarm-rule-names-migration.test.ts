// Migration 0009 makes a rule's name unique per bench (in any letter case). An older database may
// hold rules named alike: the migration still runs, gives each twin but the oldest the first free
// " (n)", and records each rename in the audit trail.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { migrationsBefore, type OlderMigrations } from '../helpers/older-migrations.ts';

let db: FreshDatabase;
let before: OlderMigrations | undefined;

beforeAll(async () => {
  db = await useFreshDatabase('rulenames');
  // The committed migrations before the unique index, as an older install has them.
  before = await migrationsBefore(9);
});
afterAll(async () => {
  await db?.restore();
  await before?.remove();
});

it('renames the twins of older databases, audited, then refuses new ones', async () => {
  await migrateDatabase(before!.dir);
  const pool = getDbHandle().pool;
  await pool.query("insert into benches (id, name, wavelength_nm) values ('one', 'One', 633), ('two', 'Two', 810)");
  const names: [string, string][] = [
    ['one', 'B overexposure'],
    ['one', 'B overexposure'],
    ['one', 'b overexposure'],
    // Already holds the first free suffix of the group above: the renames go past it.
    ['one', 'B overexposure (2)'],
    // Another bench may use the name.
    ['two', 'B overexposure'],
    ['one', 'Dim A'],
  ];
  const ids: number[] = [];
  for (const [bench, name] of names) {
    const { rows } = await pool.query<{ id: string }>(
      "insert into alarm_rules (bench_id, name, metric, threshold, clear_threshold) values ($1, $2, 'rate_high', 10, 5) returning id",
      [bench, name],
    );
    ids.push(Number(rows[0]!.id));
  }

  await migrateDatabase();

  const { rows } = await pool.query<{ id: string; name: string }>('select id, name from alarm_rules order by id');
  expect(rows.map((r) => r.name)).toEqual(['B overexposure', 'B overexposure (3)', 'b overexposure (4)', 'B overexposure (2)', 'B overexposure', 'Dim A']);
  const audit = await pool.query<{ entity_id: string; action: string; actor_id: string | null; before: unknown; after: unknown }>(
    "select entity_id, action, actor_id, before, after from audit_log where entity = 'alarm_rule' order by id",
  );
  expect(audit.rows).toEqual([
    { entity_id: String(ids[1]), action: 'rename_duplicate', actor_id: null, before: { name: 'B overexposure' }, after: { name: 'B overexposure (3)' } },
    { entity_id: String(ids[2]), action: 'rename_duplicate', actor_id: null, before: { name: 'b overexposure' }, after: { name: 'b overexposure (4)' } },
  ]);
  await expect(pool.query("insert into alarm_rules (bench_id, name, metric, threshold, clear_threshold) values ('one', 'DIM a', 'rate_high', 10, 5)")).rejects.toMatchObject({
    code: '23505',
    constraint: 'alarm_rules_bench_name_idx',
  });
});
