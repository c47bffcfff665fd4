// The one auth check: used by the middleware for pages and API routes and by the WebSocket
// upgrade, so every way in sees the same rules.
import { userForApiToken } from './api-tokens.ts';
import { SESSION_COOKIE, validateSession, type CookieSpec, type SessionUser } from './lucia.ts';

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
    if (eq > 0 && part.slice(0, eq).trim() === name) return decodeURIComponent(part.slice(eq + 1).trim());
  }
  return null;
}

export async function authenticate(headers: Headers | Record<string, string | string[] | undefined>): Promise<AuthResult> {
  const get = (name: string): string | null => {
    if (headers instanceof Headers) return headers.get(name);
    const v = headers[name];
    return Array.isArray(v) ? (v[0] ?? null) : (v ?? null);
  };
  const authz = get('authorization');
  if (authz?.toLowerCase().startsWith('bearer ')) {
    const user = await userForApiToken(authz.slice(7).trim());
    return { user, sessionId: null, method: user ? 'token' : null, cookie: null };
  }
  const sessionId = readCookie(get('cookie'), SESSION_COOKIE);
  if (!sessionId) return { user: null, sessionId: null, method: null, cookie: null };
  const res = await validateSession(sessionId);
  return { user: res.user, sessionId: res.sessionId, method: res.user ? 'session' : null, cookie: res.cookie };
}
