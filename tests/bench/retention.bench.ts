// Retention with a kept run at the head of a gateway's key: once the older unkept rows are gone, a
// kept run's rows are the oldest left, and every later pass must delete the newer expired rows
// after them. A day of 100 ms batches (the gateway's default) is 864,000 rows; this keeps 600,000.
// Beside them, the gateway's sums of two channels: 30 days of 1 s blocks, ten years of 1 min ones.
// Measures one pass over 20,000 expired rows (40 steps of 500) and a pass with nothing to delete.
// Target: a step's statement stays within tens of ms whatever the kept rows before it (a long
// statement holds back the pruning of the rollups' many updates). Run:
// `npx tsx tests/bench/retention.bench.ts` (or `run()` from the bench runner).
import { pathToFileURL } from 'node:url';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { DEFAULT_RETENTION, runRetention, setRetention } from '../../src/lib/server/retention.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';

const DAY = 86_400_000;
const KEPT_ROWS = 600_000;
const EXPIRED_ROWS = 20_000;
const STEP_ROWS = 500;
const SUM_KEYS = ['a', 'b'];

export async function run(): Promise<Record<string, number>> {
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  try {
    await migrateDatabase();
    const pool = getDbHandle().pool;
    const tag = Date.now().toString(36);
    const bench = `rb-${tag}`;
    const gw = `rb-${tag}-gw`;
    await pool.query(`insert into benches (id, name, wavelength_nm) values ($1, 'Retention bench', 633)`, [bench]);
    await pool.query(`insert into gateways (id, bench_id, token_hash) values ($1, $2, 'none')`, [gw, bench]);
    const now = Date.now();
    const t0 = Math.floor((now - 60 * DAY) / 1000) * 1000;
    // 100 ms batches of 10 bins of 10 ms, two channels.
    await pool.query(
      `insert into count_batches (gateway_id, t0, t1, dt, n, keys, counts, boot, seq)
       select $1, $2::int8 + i * 100, $2::int8 + (i + 1) * 100, 10, 10, '{a,b}', decode(repeat('00', 80), 'hex'), 'b', i
         from generate_series(0, $3::int - 1) i`,
      [gw, t0, KEPT_ROWS + EXPIRED_ROWS],
    );
    await pool.query(`insert into runs (bench_id, title, start_ms, end_ms, keep) values ($1, 'Kept day', $2, $3, true)`, [bench, t0, t0 + KEPT_ROWS * 100]);
    const hour = Math.floor(now / 3_600_000) * 3_600_000;
    for (const key of SUM_KEYS) {
      for (const [stepMs, blocks] of [
        [1_000, 30 * 1_440],
        [60_000, 3_650 * 24],
      ] as const) {
        await pool.query(
          `insert into rollups (gateway_id, key, step_ms, block_t0, sums, bins)
           select $1, $2, $3, $4::int8 - i::int8 * $5::int8, array_fill(5::int8, array[60]), array_fill(10, array[60])
             from generate_series(1, $6::int) i`,
          [gw, key, stepMs, hour, stepMs * 60, blocks],
        );
      }
    }
    await pool.query('vacuum analyze count_batches, rollups');
    await setRetention(DEFAULT_RETENTION, null);

    let started = performance.now();
    const pass = await runRetention({ now, stepRows: STEP_ROWS, pauseMs: 0 });
    const passMs = performance.now() - started;
    started = performance.now();
    await runRetention({ now, stepRows: STEP_ROWS, pauseMs: 0 });
    const idleMs = performance.now() - started;
    const { rows } = await pool.query<{ n: string }>('select count(*) as n from count_batches where gateway_id = $1', [gw]);
    if (pass.deleted.raw < EXPIRED_ROWS || Number(rows[0]!.n) !== KEPT_ROWS) throw new Error(`deleted ${pass.deleted.raw}, left ${rows[0]!.n}`);
    const r = (ms: number) => Math.round(ms * 10) / 10;
    return { retentionKeptRows: KEPT_ROWS, retentionExpiredRows: EXPIRED_ROWS, retentionSumRows: SUM_KEYS.length * (30 * 1_440 + 3_650 * 24), retentionPassMs: r(passMs), retentionMsPerStep: r(passMs / (EXPIRED_ROWS / STEP_ROWS)), retentionIdlePassMs: r(idleMs) };
  } finally {
    const { closeDb } = await import('../../src/lib/server/db/index.ts');
    await closeDb();
    if (ownDb) await stopTestDb();
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  run().then(
    (r) => {
      console.log(JSON.stringify(r, null, 2));
      console.log((r['retentionMsPerStep'] ?? Infinity) < 100 ? 'target met (< 100 ms a step)' : 'target NOT met');
      process.exit(0);
    },
    (err) => {
      console.error(err);
      process.exit(1);
    },
  );
}
