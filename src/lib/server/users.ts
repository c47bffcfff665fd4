// Accounts: creation, sign-in checks and password changes. Pages and the admin CLI call these.
import { eq, sql } from 'drizzle-orm';
import { z } from 'zod';
import { getDb } from './db/index.ts';
import { users, type User } from './db/schema.ts';
import { dummyPasswordHash, hashPassword, MIN_PASSWORD_LENGTH, verifyPassword } from './auth/password.ts';
import { signInLimiters } from './auth/rate-limit.ts';
import type { Role } from './auth/roles.ts';
import { newId } from './auth/secrets.ts';

export const emailSchema = z.string().trim().toLowerCase().email('not a valid e-mail address').max(254);
export const passwordSchema = z.string().min(MIN_PASSWORD_LENGTH, `passwords need at least ${MIN_PASSWORD_LENGTH} characters`).max(200);
export const roleSchema = z.enum(['admin', 'operator', 'observer']);

export class DuplicateError extends Error {
  constructor(
    message: string,
    /** The form field holding the name that is taken. */
    readonly field: string,
  ) {
    super(message);
  }
}

export async function findUserByEmail(email: string): Promise<User | null> {
  const [row] = await getDb().select().from(users).where(eq(users.email, email.trim().toLowerCase())).limit(1);
  return row ?? null;
}

export async function createUser(input: { email: string; role: Role; name?: string; password?: string }): Promise<User> {
  const email = emailSchema.parse(input.email);
  const passwordHash = input.password === undefined ? null : await hashPassword(passwordSchema.parse(input.password));
  const [row] = await getDb()
    .insert(users)
    .values({ id: newId(), email, role: input.role, name: input.name ?? '', passwordHash })
    .onConflictDoNothing({ target: users.email })
    .returning();
  if (!row) throw new DuplicateError(`a user with e-mail ${email} already exists`, 'email');
  return row;
}

export async function setPassword(userId: string, password: string): Promise<void> {
  await getDb().update(users).set({ passwordHash: await hashPassword(passwordSchema.parse(password)) }).where(eq(users.id, userId));
}

export type SignInResult = { ok: true; user: User } | { ok: false; reason: 'invalid' | 'throttled' };

/**
 * Checks e-mail and password with throttling per account and per address. Unknown account,
 * wrong password and deactivated account all give the same 'invalid', with alike timing.
 */
export async function checkSignIn(emailRaw: string, password: string, address: string): Promise<SignInResult> {
  const email = emailRaw.trim().toLowerCase();
  const limiters = signInLimiters();
  if (!limiters.address.consume(address) || !limiters.account.consume(email)) return { ok: false, reason: 'throttled' };
  const user = await findUserByEmail(email);
  const valid = await verifyPassword(user?.passwordHash ?? (await dummyPasswordHash()), password);
  if (!user || !user.passwordHash || !valid || !user.active) return { ok: false, reason: 'invalid' };
  // Only failures count: a successful sign-in takes back its attempt at the address too.
  limiters.account.reset(email);
  limiters.address.refund(address);
  return { ok: true, user };
}

export async function listUsers(): Promise<User[]> {
  return await getDb().select().from(users).orderBy(users.email);
}

export async function countAdmins(): Promise<number> {
  const [row] = await getDb().select({ n: sql<number>`count(*)::int` }).from(users).where(sql`${users.role} = 'admin' and ${users.active}`);
  return row?.n ?? 0;
}
