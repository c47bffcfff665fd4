// The host of an Origin header, for the same-origin checks of cookie-authenticated requests.
// Browsers send `Origin: null` from sandboxed frames and file pages: that is no origin, not an error.

/** The origin's host, or null when the header is not a URL. */
export function originHost(origin: string): string | null {
  try {
    return new URL(origin).host;
  } catch {
    return null;
  }
}
