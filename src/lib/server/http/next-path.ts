// Where to go after sign-in: only a path on this site. Browsers read "//host", "/\host" and
// "/<tab>/host" (they drop tabs and newlines, and take "\" for "/") as another host.

/**
 * `next` when it is a same-origin absolute path in printable ASCII (as the middleware writes it:
 * percent-encoded), else "/". No "//", no "\", no control characters or spaces; non-ASCII would
 * also make the Location header throw.
 */
export function safeNextPath(next: string | null): string {
  if (next === null || !next.startsWith('/') || next.includes('//') || next.includes('\\')) return '/';
  return /^[\x21-\x7e]*$/.test(next) ? next : '/';
}
