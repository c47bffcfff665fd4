// Same-origin rules for requests that browsers can make on a user's behalf (forms, fetch with the
// session cookie). Browsers send `Origin: null` from sandboxed frames and file pages: that is no
// origin, not an error.

/** The origin's host, or null when the header is not a URL. */
export function originHost(origin: string): string | null {
  try {
    return new URL(origin).host;
  } catch {
    return null;
  }
}

/** Methods that change nothing, which any site may send (RFC 9110 §9.2.1). */
const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

export interface OriginFacts {
  method: string;
  /** The Origin header, or null when absent. */
  origin: string | null;
  /** Our own origin as users reach it (Astro's request URL: Host or X-Forwarded-* checked against `allowedDomains`). */
  ownOrigin: string;
  /** An `Authorization: Bearer` header: the request is authenticated by it alone, never by the cookie. */
  bearer: boolean;
  /** The session cookie is present (valid or not). */
  sessionCookie: boolean;
  /** A script API path (`/api/…`). */
  api: boolean;
}

/**
 * Whether an unsafe request must be refused as cross-site. It must come from our own origin,
 * whatever its content type (Astro's own check only looks at form-like ones), unless nothing
 * ambient authenticates it: a Bearer request is authenticated by a header no other site can make
 * a browser send without a CORS preflight, which we never grant; an API request without the
 * session cookie can only get the endpoint's 401. Pages are checked even without a cookie, so a
 * form elsewhere cannot sign someone in to an account of its choosing. The Origin header alone
 * decides: every current browser sends it on a POST, same-origin ones included, and a Referer
 * fallback would only admit requests whose origin was hidden on purpose.
 */
export function crossSiteRefused(f: OriginFacts): boolean {
  if (SAFE_METHODS.has(f.method) || f.bearer) return false;
  if (f.api && !f.sessionCookie) return false;
  return f.origin !== f.ownOrigin;
}
