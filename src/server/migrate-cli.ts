// `npm run db:migrate`: applies the committed migrations to DATABASE_URL or the private cluster.
import { closeDb } from '../lib/server/db/index.ts';
import { migrateDatabase } from '../lib/server/db/migrate.ts';
import { connectDatabase } from './database.ts';

const cluster = await connectDatabase();
try {
  await migrateDatabase();
  console.log('migrations applied');
} finally {
  await closeDb();
  if (cluster?.startedHere) cluster.stop();
}
