// One-time links for invitations and password resets: a 256-bit token in the URL, only its SHA-256
// in the database, valid once and for a limited time.
import { and, eq, gt, isNull, TransactionRollbackError } from 'drizzle-orm';
import { getDb } from './db/index.ts';
import { oneTimeLinks, users } from './db/schema.ts';
import { hashSecret, newSecret } from './auth/secrets.ts';
import { invalidateUserSessions } from './auth/lucia.ts';
import { hashPassword } from './auth/password.ts';
import { passwordSchema } from './users.ts';

export type LinkPurpose = 'invite' | 'reset';

/** Invitations wait for the invitee over a long weekend; a reset is for someone at their desk now. */
export const LINK_LIFETIME_MS: Record<LinkPurpose, number> = {
  invite: 72 * 3600_000,
  reset: 2 * 3600_000,
};

export async function createOneTimeLink(userId: string, purpose: LinkPurpose, now = new Date()): Promise<{ token: string; expiresAt: Date }> {
  const token = newSecret();
  const expiresAt = new Date(now.getTime() + LINK_LIFETIME_MS[purpose]);
  await getDb().transaction(async (tx) => {
    // A fresh link replaces any earlier unused one, so only the newest e-mail works.
    await tx.update(oneTimeLinks).set({ usedAt: now }).where(and(eq(oneTimeLinks.userId, userId), isNull(oneTimeLinks.usedAt)));
    await tx.insert(oneTimeLinks).values({ tokenHash: hashSecret(token), userId, purpose, expiresAt });
  });
  return { token, expiresAt };
}

export type LinkState =
  | { state: 'valid'; purpose: LinkPurpose; userId: string; email: string }
  | { state: 'expired' | 'used' | 'unknown' };

export async function inspectOneTimeLink(token: string, now = new Date()): Promise<LinkState> {
  if (token.length > 100) return { state: 'unknown' };
  const [row] = await getDb()
    .select({ purpose: oneTimeLinks.purpose, userId: oneTimeLinks.userId, expiresAt: oneTimeLinks.expiresAt, usedAt: oneTimeLinks.usedAt, email: users.email, active: users.active })
    .from(oneTimeLinks)
    .innerJoin(users, eq(users.id, oneTimeLinks.userId))
    .where(eq(oneTimeLinks.tokenHash, hashSecret(token)))
    .limit(1);
  if (!row || !row.active) return { state: 'unknown' };
  if (row.usedAt) return { state: 'used' };
  if (row.expiresAt <= now) return { state: 'expired' };
  return { state: 'valid', purpose: row.purpose, userId: row.userId, email: row.email };
}

/**
 * Sets the password through a link, once: the link is marked used in the same statement that
 * checks it, so two submissions racing cannot both succeed. Ends the user's other sessions.
 */
export async function redeemOneTimeLink(token: string, password: string, now = new Date()): Promise<{ userId: string } | LinkState> {
  // Checked before hashing: a made-up link must not cost the server an argon2 hash.
  const before = await inspectOneTimeLink(token, now);
  if (before.state !== 'valid') return before;
  const passwordHash = await hashPassword(passwordSchema.parse(password));
  const userId = await getDb().transaction(async (tx) => {
    const [link] = await tx
      .update(oneTimeLinks)
      .set({ usedAt: now })
      .where(and(eq(oneTimeLinks.tokenHash, hashSecret(token)), isNull(oneTimeLinks.usedAt), gt(oneTimeLinks.expiresAt, now)))
      .returning({ userId: oneTimeLinks.userId });
    if (!link) return null;
    const [user] = await tx.update(users).set({ passwordHash }).where(and(eq(users.id, link.userId), eq(users.active, true))).returning({ id: users.id });
    if (!user) tx.rollback();
    return link.userId;
  }).catch((err: unknown) => {
    // rollback() above (deactivated user) surfaces as this error: the link simply does not work.
    if (err instanceof TransactionRollbackError) return null;
    throw err;
  });
  if (!userId) return await inspectOneTimeLink(token, now);
  await invalidateUserSessions(userId);
  return { userId };
}
