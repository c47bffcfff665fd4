// Migration 0007 gives sweeps stored before the net visibility's error had a column that error,
// from the 68% interval their stored fit kept for the net V; rows without one stay raw only.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';
import { migrationsBefore, type OlderMigrations } from '../helpers/older-migrations.ts';

let db: FreshDatabase;
let before: OlderMigrations | undefined;

beforeAll(async () => {
  db = await useFreshDatabase('netbackfill');
  // The committed migrations up to the one before the new column, as an older install has them.
  before = await migrationsBefore(6);
});
afterAll(async () => {
  await db?.restore();
  await before?.remove();
});

it('fills the net error from the stored fit and leaves rows without one raw only', async () => {
  await migrateDatabase(before!.dir);
  const pool = getDbHandle().pool;
  await pool.query("insert into benches (id, name, wavelength_nm) values ('old', 'Old', 633)");
  const fits = [
    // Fisher: the interval is V ± σ.
    { visibilityNet: 0.9, fit: { shown: 'net', visibilityInterval: { lower: 0.9 - 0.0043, upper: 0.9 + 0.0043, method: 'fisher' } } },
    // Profile: the error is the interval's half-width, however lopsided.
    { visibilityNet: 0.97, fit: { shown: 'net', visibilityInterval: { lower: 0.93, upper: 1, method: 'profile' } } },
    { visibilityNet: null, fit: { shown: 'raw', visibilityInterval: { lower: 0.71, upper: 0.73, method: 'fisher' } } },
    { visibilityNet: 0.9, fit: {} },
  ];
  for (const [i, f] of fits.entries()) {
    await pool.query(
      `insert into sweeps (bench_id, start_ms, end_ms, direction, visibility, visibility_err, visibility_net, phase, phase_err, period_x, period_x_err, counts, fit)
       values ('old', $1, $2, 'up', 0.72, 0.0034, $3, 0, 0.01, 2.5, 0.01, 1000, $4)`,
      [i * 1000, i * 1000 + 900, f.visibilityNet, JSON.stringify(f.fit)],
    );
  }
  await migrateDatabase();
  const { rows } = await pool.query<{ e: number | null }>('select visibility_net_err as e from sweeps order by start_ms');
  const errs = rows.map((r) => r.e);
  expect(errs[0]).toBeCloseTo(0.0043, 12);
  expect(errs[1]).toBeCloseTo(0.035, 12);
  expect(errs.slice(2)).toEqual([null, null]);
});
