// An empty database of its own on the test run's PostgreSQL, for tests that need a clean slate
// (migrations from nothing, the seed, rules about "the last admin"). Points this process's DB
// module at it until the returned `restore` runs.
import pg from 'pg';
import { closeDb } from '../../src/lib/server/db/index.ts';
import { ensureDatabase } from '../../src/lib/server/db/cluster.ts';

export interface FreshDatabase {
  url: string;
  restore(): Promise<void>;
}

function withDatabase(url: string, name: string): string {
  const u = new URL(url);
  u.pathname = '/' + name;
  return u.href;
}

export async function useFreshDatabase(tag: string): Promise<FreshDatabase> {
  const base = process.env['DATABASE_URL'];
  if (!base) throw new Error('DATABASE_URL is not set: run through vitest (tests/setup/global-db.ts)');
  const name = `fw_${tag}_${process.pid}_${Date.now().toString(36)}`.replace(/[^a-z0-9_]/g, '_');
  const adminUrl = withDatabase(base, 'postgres');
  await ensureDatabase(adminUrl, name);
  const url = withDatabase(base, name);
  // The URL before the close: whatever opens the database while the old pool ends opens this one.
  process.env['DATABASE_URL'] = url;
  await closeDb();
  return {
    url,
    restore: async () => {
      // As above: a timer of an app just closed that reaches for the database meanwhile must get
      // the run's own, not this one, which is dropped next (a later file once failed on that).
      process.env['DATABASE_URL'] = base;
      await closeDb();
      const client = new pg.Client({ connectionString: adminUrl });
      await client.connect();
      await client.query(`drop database if exists "${name}" with (force)`);
      await client.end();
    },
  };
}
