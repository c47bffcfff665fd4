// People administration and self-service: invitations, roles, deactivation, reset links and
// password changes. Every admin change is written to the audit trail.
import { and, eq, ne, sql } from 'drizzle-orm';
import { z } from 'zod';
import { getDb } from './db/index.ts';
import { users, type User } from './db/schema.ts';
import { recordAudit } from './audit.ts';
import { invalidateOtherSessions, invalidateUserSessions, type SessionUser } from './auth/lucia.ts';
import { hashPassword, verifyPassword } from './auth/password.ts';
import type { Role } from './auth/roles.ts';
import { newId } from './auth/secrets.ts';
import { HttpError } from './http/responses.ts';
import { sendMail } from './mail/send.ts';
import { createOneTimeLink, LINK_LIFETIME_MS, type LinkPurpose } from './one-time-links.ts';
import { emailSchema, passwordSchema, roleSchema } from './users.ts';

/** What the audit trail and pages may show of a user: never the password hash. */
export function publicUser(u: User) {
  return { email: u.email, name: u.name, role: u.role, active: u.active };
}

export async function listPeople() {
  const rows = await getDb().select().from(users).orderBy(users.email);
  return rows.map((u) => ({ id: u.id, ...publicUser(u), invited: u.passwordHash === null, createdAt: u.createdAt }));
}

export async function loadUser(id: string): Promise<User> {
  const [row] = await getDb().select().from(users).where(eq(users.id, id)).limit(1);
  if (!row) throw new HttpError(404, 'no such user');
  return row;
}

export const inviteSchema = z.object({
  email: emailSchema,
  name: z.string().trim().max(100).default(''),
  role: roleSchema,
});

function linkMail(purpose: LinkPurpose, url: string, invitedBy: string): { subject: string; text: string } {
  const hours = LINK_LIFETIME_MS[purpose] / 3600_000;
  if (purpose === 'invite') {
    return {
      subject: 'You are invited to Fringewise',
      text: `${invitedBy} invited you to the lab's Fringewise, where the benches' photon counts and fringes are shown live.\n\nSet your password here (the link works once, for ${hours} hours):\n${url}\n\nIf you did not expect this, ignore this message.`,
    };
  }
  return {
    subject: 'Set a new Fringewise password',
    text: `${invitedBy} sent you a link to set a new Fringewise password (it works once, for ${hours} hours):\n${url}\n\nIf you did not ask for this, tell your lab's admin.`,
  };
}

async function mailLink(user: User, purpose: LinkPurpose, origin: string, actor: SessionUser): Promise<void> {
  const { token } = await createOneTimeLink(user.id, purpose);
  const url = new URL(`/welcome/${token}`, origin).href;
  await sendMail({ to: user.email, ...linkMail(purpose, url, actor.name || actor.email) });
}

/** Creates the account without a password and e-mails a one-time link to set one. */
export async function inviteUser(actor: SessionUser, input: z.input<typeof inviteSchema>, origin: string): Promise<User> {
  const data = inviteSchema.parse(input);
  const [row] = await getDb()
    .insert(users)
    .values({ id: newId(), email: data.email, name: data.name, role: data.role, passwordHash: null })
    .onConflictDoNothing({ target: users.email })
    .returning();
  if (!row) throw new HttpError(409, `${data.email} already has an account`, 'email');
  await recordAudit({ actorId: actor.id, entity: 'user', entityId: row.id, action: 'invite', after: publicUser(row) });
  try {
    await mailLink(row, 'invite', origin, actor);
  } catch (err) {
    // The account stays (an invitation is a row plus a mail); the admin resends from the list.
    const reason = err instanceof Error ? err.message : String(err);
    throw new HttpError(502, `the account for ${row.email} was made, but the invitation e-mail did not go out (${reason.slice(0, 120)}); send the link again from the people list`);
  }
  return row;
}

export async function sendResetLink(actor: SessionUser, userId: string, origin: string): Promise<User> {
  const user = await loadUser(userId);
  if (!user.active) throw new HttpError(409, 'reactivate the account before sending it a link');
  // An invitee who lost the first e-mail gets a fresh invitation rather than a "reset".
  const purpose: LinkPurpose = user.passwordHash ? 'reset' : 'invite';
  await mailLink(user, purpose, origin, actor);
  await recordAudit({ actorId: actor.id, entity: 'user', entityId: user.id, action: purpose === 'reset' ? 'send_reset_link' : 'resend_invite' });
  return user;
}

/**
 * Applies a change unless it would leave the lab without an active admin. The check runs inside
 * the transaction after locking the admin rows, so two admins demoting each other at once cannot
 * both succeed.
 */
async function changeUser(actor: SessionUser, userId: string, action: string, patch: { role?: Role; active?: boolean }): Promise<User> {
  const result = await getDb().transaction(async (tx) => {
    await tx.execute(sql`select id from ${users} where ${users.role} = 'admin' and ${users.active} for update`);
    const [before] = await tx.select().from(users).where(eq(users.id, userId)).limit(1);
    if (!before) throw new HttpError(404, 'no such user');
    const losesAdmin = before.role === 'admin' && before.active && (patch.role !== undefined ? patch.role !== 'admin' : patch.active === false);
    if (losesAdmin) {
      const [others] = await tx
        .select({ n: sql<number>`count(*)::int` })
        .from(users)
        .where(and(eq(users.role, 'admin'), eq(users.active, true), ne(users.id, userId)));
      if ((others?.n ?? 0) === 0) throw new HttpError(409, 'the lab needs at least one active admin: make someone else admin first');
    }
    const [after] = await tx.update(users).set(patch).where(eq(users.id, userId)).returning();
    if (!after) throw new HttpError(404, 'no such user');
    await recordAudit({ actorId: actor.id, entity: 'user', entityId: userId, action, before: publicUser(before), after: publicUser(after) }, tx);
    return after;
  });
  // Sessions carry the role read at each request, but a deactivated user must be out at once.
  if (patch.active === false) await invalidateUserSessions(userId);
  return result;
}

export async function changeRole(actor: SessionUser, userId: string, role: Role): Promise<User> {
  return await changeUser(actor, userId, 'change_role', { role });
}

export async function setActive(actor: SessionUser, userId: string, active: boolean): Promise<User> {
  return await changeUser(actor, userId, active ? 'reactivate' : 'deactivate', { active });
}

export const changePasswordSchema = z
  .object({
    current: z.string().min(1, 'enter your current password').max(200),
    password: passwordSchema,
    confirm: z.string().max(200),
  })
  .refine((v) => v.password === v.confirm, { message: 'the new passwords do not match', path: ['confirm'] });

/** Changes one's own password; other sessions of the user end, the current one stays. */
export async function changeOwnPassword(userId: string, currentSessionId: string | null, input: z.input<typeof changePasswordSchema>): Promise<void> {
  const data = changePasswordSchema.parse(input);
  const user = await loadUser(userId);
  if (!user.passwordHash || !(await verifyPassword(user.passwordHash, data.current))) throw new HttpError(422, 'the current password is not right', 'current');
  await getDb().update(users).set({ passwordHash: await hashPassword(data.password) }).where(eq(users.id, userId));
  await invalidateOtherSessions(userId, currentSessionId);
}
