// Migration 0011 lets alarm events outlive their rule: each keeps the rule's name and metric, and
// deleting the rule leaves its rule id empty instead of deleting the events. Events of an older
// database get the name and metric their rule has when it runs.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { migrationsBefore, type OlderMigrations } from '../helpers/older-migrations.ts';

let db: FreshDatabase;
let before: OlderMigrations | undefined;

beforeAll(async () => {
  db = await useFreshDatabase('alarmhist');
  // The committed migrations before events kept their rule's name, as an older install has them.
  before = await migrationsBefore(11);
});
afterAll(async () => {
  await db?.restore();
  await before?.remove();
});

it('names the events of older databases after their rule, and keeps them when the rule is deleted', async () => {
  await migrateDatabase(before!.dir);
  const pool = getDbHandle().pool;
  await pool.query("insert into benches (id, name, wavelength_nm) values ('one', 'One', 633)");
  const rule = async (name: string, metric: string) =>
    (await pool.query<{ id: string }>("insert into alarm_rules (bench_id, name, metric, threshold, clear_threshold) values ('one', $1, $2, 10, 5) returning id", [name, metric])).rows[0]!.id;
  const [bright, quiet] = [await rule('A too bright', 'rate_high'), await rule('Gateway quiet', 'gateway_silent')];
  const event = async (ruleId: string, cleared: boolean) =>
    (
      await pool.query<{ id: string }>(
        "insert into alarm_events (rule_id, bench_id, severity, subject, message, value, cleared_at) values ($1, 'one', 'warning', 'gw/a', 'm', 20, $2) returning id",
        [ruleId, cleared ? new Date() : null],
      )
    ).rows[0]!.id;
  const ids = [await event(bright, true), await event(bright, false), await event(quiet, false)];

  await migrateDatabase();

  const named = await pool.query<{ id: string; rule_id: string; rule_name: string; metric: string }>('select id, rule_id, rule_name, metric from alarm_events order by id');
  expect(named.rows).toEqual([
    { id: ids[0], rule_id: bright, rule_name: 'A too bright', metric: 'rate_high' },
    { id: ids[1], rule_id: bright, rule_name: 'A too bright', metric: 'rate_high' },
    { id: ids[2], rule_id: quiet, rule_name: 'Gateway quiet', metric: 'gateway_silent' },
  ]);
  // The columns need a value from now on: the engine writes them with every raise.
  await expect(pool.query("insert into alarm_events (rule_id, bench_id, severity, message) values ($1, 'one', 'info', 'm')", [bright])).rejects.toMatchObject({ code: '23502' });

  await pool.query('delete from alarm_rules where id = $1', [bright]);
  const kept = await pool.query<{ id: string; rule_id: string | null; rule_name: string }>('select id, rule_id, rule_name from alarm_events order by id');
  expect(kept.rows).toEqual([
    { id: ids[0], rule_id: null, rule_name: 'A too bright' },
    { id: ids[1], rule_id: null, rule_name: 'A too bright' },
    { id: ids[2], rule_id: quiet, rule_name: 'Gateway quiet' },
  ]);
});
