// The only module that knows the session library; pages and endpoints go through the helpers
// below and `authenticate.ts`, so Lucia (feature-frozen upstream) can be swapped without touching them.
import { DrizzlePostgreSQLAdapter } from '@lucia-auth/adapter-drizzle';
import { Lucia, TimeSpan, type Cookie } from 'lucia';
import { getDb } from '../db/index.ts';
import { sessions, users } from '../db/schema.ts';

export type Role = 'admin' | 'operator' | 'observer';

export interface SessionUser {
  id: string;
  email: string;
  name: string;
  role: Role;
}

function createLucia() {
  const adapter = new DrizzlePostgreSQLAdapter(getDb(), sessions, users);
  return new Lucia(adapter, {
    sessionExpiresIn: new TimeSpan(14, 'd'),
    sessionCookie: {
      name: 'fw_session',
      attributes: {
        // Secure only when served over https (set FRINGEWISE_SECURE_COOKIES=1 behind a TLS proxy).
        secure: process.env['FRINGEWISE_SECURE_COOKIES'] === '1',
        sameSite: 'lax',
      },
    },
    getUserAttributes: (a) => ({ email: a.email, name: a.name, role: a.role, active: a.active }),
  });
}

declare module 'lucia' {
  interface Register {
    Lucia: ReturnType<typeof createLucia>;
    DatabaseUserAttributes: { email: string; name: string; role: Role; active: boolean };
  }
}

let instance: ReturnType<typeof createLucia> | undefined;
function lucia() {
  instance ??= createLucia();
  return instance;
}

export const SESSION_COOKIE = 'fw_session';

export type CookieSpec = Cookie;

export async function createSession(userId: string): Promise<CookieSpec> {
  const session = await lucia().createSession(userId, {});
  return lucia().createSessionCookie(session.id);
}

/** Validates a session id; returns the user (null when missing, expired or deactivated) and a cookie to refresh or clear. */
export async function validateSession(
  sessionId: string,
): Promise<{ user: SessionUser | null; sessionId: string | null; cookie: CookieSpec | null }> {
  const { session, user } = await lucia().validateSession(sessionId);
  if (!session || !user || !user.active) {
    if (session) await lucia().invalidateSession(session.id);
    return { user: null, sessionId: null, cookie: lucia().createBlankSessionCookie() };
  }
  const cookie = session.fresh ? lucia().createSessionCookie(session.id) : null;
  return { user: { id: user.id, email: user.email, name: user.name, role: user.role }, sessionId: session.id, cookie };
}

/** A cookie that clears the session cookie in the browser. */
export function blankSessionCookie(): CookieSpec {
  return lucia().createBlankSessionCookie();
}

export async function invalidateSession(sessionId: string): Promise<CookieSpec> {
  await lucia().invalidateSession(sessionId);
  return lucia().createBlankSessionCookie();
}

export async function invalidateUserSessions(userId: string): Promise<void> {
  await lucia().invalidateUserSessions(userId);
}

/** After a password change: every other device signs in again, the one that made the change stays. */
export async function invalidateOtherSessions(userId: string, keepSessionId: string | null): Promise<void> {
  for (const s of await lucia().getUserSessions(userId)) if (s.id !== keepSessionId) await lucia().invalidateSession(s.id);
}
