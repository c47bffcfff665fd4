// Starts a throwaway PostgreSQL cluster for the test run (never a server left running elsewhere)
// and hands its URL to the test workers through the environment.
import { mkdtempSync, rmSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { startCluster, type Cluster } from '../../src/lib/server/db/cluster.ts';

let cluster: Cluster | undefined;
let dir: string | undefined;

export async function setup(): Promise<void> {
  if (process.env['DATABASE_URL']) return;
  dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-test-'));
  // The postgres system user must be able to enter it when we run as root.
  chmodSync(dir, 0o755);
  cluster = await startCluster(dir, { dbName: 'fringewise_test' });
  process.env['DATABASE_URL'] = cluster.url;
  const { migrateDatabase } = await import('../../src/lib/server/db/migrate.ts');
  const { closeDb } = await import('../../src/lib/server/db/index.ts');
  await migrateDatabase();
  await closeDb();
}

export async function teardown(): Promise<void> {
  cluster?.stop();
  if (dir) rmSync(dir, { recursive: true, force: true });
}
