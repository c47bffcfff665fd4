// The one auth check: used by the middleware for pages and API routes and by the WebSocket
// upgrade, so every way in sees the same rules.
import { userForApiToken } from './api-tokens.ts';
import { SESSION_COOKIE, blankSessionCookie, validateSession, type CookieSpec, type SessionUser } from './lucia.ts';

export interface AuthResult {
  user: SessionUser | null;
  sessionId: string | null;
  method: 'session' | 'token' | null;
  /** A cookie to set on the response (refreshed or cleared session). */
  cookie: CookieSpec | null;
}

export function readCookie(header: string | null | undefined, name: string): string | null {
  if (!header) return null;
  for (const part of header.split(';')) {
    const eq = part.indexOf('=');
    if (eq > 0 && part.slice(0, eq).trim() === name) {
      try {
        return decodeURIComponent(part.slice(eq + 1).trim());
      } catch {
        return ''; // "%zz": present but unreadable, so treated as a stale cookie
      }
    }
  }
  return null;
}

/** The token of an `Authorization: Bearer` header, or null when the header is absent or another scheme. */
export function bearerToken(authorization: string | null): string | null {
  return authorization?.toLowerCase().startsWith('bearer ') ? authorization.slice(7).trim() : null;
}

/** Lucia's session ids are lowercase base32; anything else cannot be one and is not looked up. */
const SESSION_ID = /^[a-z0-9]{1,100}$/;

export async function authenticate(headers: Headers | Record<string, string | string[] | undefined>): Promise<AuthResult> {
  const get = (name: string): string | null => {
    if (headers instanceof Headers) return headers.get(name);
    const v = headers[name];
    return Array.isArray(v) ? (v[0] ?? null) : (v ?? null);
  };
  const token = bearerToken(get('authorization'));
  if (token !== null) {
    const user = await userForApiToken(token);
    return { user, sessionId: null, method: user ? 'token' : null, cookie: null };
  }
  const sessionId = readCookie(get('cookie'), SESSION_COOKIE);
  if (sessionId === null) return { user: null, sessionId: null, method: null, cookie: null };
  // A mangled cookie (hand-edited, another app's on the same host) is cleared, never a 500.
  if (!SESSION_ID.test(sessionId)) return { user: null, sessionId: null, method: null, cookie: blankSessionCookie() };
  const res = await validateSession(sessionId);
  return { user: res.user, sessionId: res.sessionId, method: res.user ? 'session' : null, cookie: res.cookie };
}
