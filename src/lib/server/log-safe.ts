// Error text that is safe to log. Drizzle's query errors carry the bound parameters in their
// message (password hashes, token hashes, one-time link hashes): log the SQL with placeholders
// and the database's reason instead, never the values.
import { DrizzleQueryError } from 'drizzle-orm';

export function errorForLog(err: unknown): string {
  if (err instanceof DrizzleQueryError) {
    const reason = err.cause instanceof Error ? err.cause.message : 'unknown database error';
    return `query failed: ${reason} [${err.query.slice(0, 300)}]`;
  }
  if (err instanceof Error) return err.stack ?? err.message;
  return String(err);
}
