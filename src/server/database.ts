// Connects the process to its database: DATABASE_URL when set, else the private cluster in .data/.
import path from 'node:path';
import { startCluster, type Cluster } from '../lib/server/db/cluster.ts';

export const DATA_DIR = path.resolve(process.env['FRINGEWISE_DATA_DIR'] ?? '.data');

/** Sets DATABASE_URL for the rest of the process; returns the cluster when we manage one. */
export async function connectDatabase(): Promise<Cluster | null> {
  if (process.env['DATABASE_URL']) return null;
  const cluster = await startCluster(DATA_DIR, { preferredPort: 54329 });
  process.env['DATABASE_URL'] = cluster.url;
  return cluster;
}
