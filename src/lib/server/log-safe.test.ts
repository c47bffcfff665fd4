import { DrizzleQueryError } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { errorForLog } from './log-safe.ts';

describe('errorForLog', () => {
  it('keeps the SQL and the reason of a failed query but never its parameters', () => {
    const err = new DrizzleQueryError('insert into "users" ("password_hash") values ($1)', ['$argon2id$v=19$secret-hash'], new Error('duplicate key'));
    const line = errorForLog(err);
    expect(line).toContain('duplicate key');
    expect(line).toContain('$1');
    expect(line).not.toContain('secret-hash');
  });
});
