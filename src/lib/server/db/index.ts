// The one database handle. Kept on globalThis because this module is loaded twice in one process
// (by the Node server entry and inside Astro's bundle) and both must share a single pool.
import { drizzle, type NodePgDatabase } from 'drizzle-orm/node-postgres';
import pg from 'pg';
import * as schema from './schema.ts';

export type Db = NodePgDatabase<typeof schema>;
/**
 * Drizzle statements on the pool, or inside a transaction a caller holds (`inTransaction`). Without
 * `.transaction()`: on a held connection it would send its own COMMIT and end the caller's early.
 */
export type Executor = Omit<Db, 'transaction'>;
/** Raw SQL on the pool or on a held connection. */
export type Queryable = Pick<pg.Pool, 'query'> | Pick<pg.PoolClient, 'query'>;
/** A transaction a caller holds, for functions that take part in it: its connection raw and through drizzle. */
export interface Tx {
  client: pg.PoolClient;
  db: Executor;
}

interface DbHandle {
  pool: pg.Pool;
  db: Db;
}

const KEY = Symbol.for('fringewise.db');
type Holder = { [KEY]?: DbHandle };

// Postgres int8 (bigint) comes back as a string by default; every bigint we store (epoch ms,
// counts, ids) is far below 2^53, so parse it to a number once, here.
pg.types.setTypeParser(20, (v) => Number(v));
const INT8_ARRAY = 1016 as Parameters<typeof pg.types.setTypeParser>[0];
const parseInt8Array = pg.types.getTypeParser(INT8_ARRAY) as (v: string) => (string | null)[];
pg.types.setTypeParser(INT8_ARRAY, (v: string) => parseInt8Array(v).map((x) => (x === null ? null : Number(x))));

export function databaseUrl(): string {
  const url = process.env['DATABASE_URL'];
  if (!url) throw new Error('DATABASE_URL is not set (the server entry sets it for the private cluster)');
  return url;
}

export function getDbHandle(): DbHandle {
  const holder = globalThis as Holder;
  if (!holder[KEY]) {
    const pool = new pg.Pool({ connectionString: databaseUrl(), max: 10, idleTimeoutMillis: 30_000 });
    // A dropped connection (server restart) must not crash the process; queries retry on a new one.
    pool.on('error', (err) => console.warn('[db] idle client error:', err.message));
    holder[KEY] = { pool, db: drizzle(pool, { schema, casing: 'snake_case' }) };
  }
  return holder[KEY];
}

export function getDb(): Db {
  return getDbHandle().db;
}

/**
 * Runs `fn` in one transaction on a pooled client of its own, for work that streams many raw
 * statements (imports, the demo's recorded past): committed when `fn` resolves, rolled back when it
 * throws. A client whose statement failed may hold a dead socket: it is discarded, not pooled.
 */
export async function inTransaction<T>(fn: (client: pg.PoolClient, tx: Tx) => Promise<T>): Promise<T> {
  const client = await getDbHandle().pool.connect();
  let broken = false;
  try {
    await client.query('begin');
    const result = await fn(client, { client, db: drizzle(client, { schema, casing: 'snake_case' }) });
    await client.query('commit');
    return result;
  } catch (err) {
    broken = true;
    await client.query('rollback').catch(() => undefined);
    throw err;
  } finally {
    client.release(broken);
  }
}

export async function closeDb(): Promise<void> {
  const holder = globalThis as Holder;
  const handle = holder[KEY];
  if (handle) {
    delete holder[KEY];
    await handle.pool.end();
  }
}

export { schema };
