import path from 'node:path';
import { drizzle } from 'drizzle-orm/node-postgres';
import { migrate } from 'drizzle-orm/node-postgres/migrator';
import { getDbHandle } from './index.ts';

// Any constant works; it only has to be the same for every instance that might start at once.
const MIGRATION_LOCK = 72_407_311;

/** Applies the committed migrations in `drizzle/` under an advisory lock, so parallel starts do not race. */
export async function migrateDatabase(folder = path.resolve(process.cwd(), 'drizzle')): Promise<void> {
  const client = await getDbHandle().pool.connect();
  try {
    await client.query('select pg_advisory_lock($1)', [MIGRATION_LOCK]);
    await migrate(drizzle(client), { migrationsFolder: folder });
  } finally {
    await client.query('select pg_advisory_unlock($1)', [MIGRATION_LOCK]).catch(() => undefined);
    client.release();
  }
}
