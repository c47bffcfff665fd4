// Where a bench stands before its first counts, so its page can say what is missing instead of
// "waiting" or "offline": no gateway assigned yet, or its gateways assigned but never heard from.
// Pure; shared by the bench page's header and live view.

export type BenchSetup = { kind: 'no-gateway' } | { kind: 'not-connected'; gateways: string[] };

/**
 * `gateways`: the bench's gateways as the page knows them now (`online`) and as the server last
 * heard from them (`lastSeenMs`, null for never). `seenOnline`: whether one came online while the
 * page was open. Null once any gateway has been heard from: from then on it is online or offline.
 */
export function benchSetup(gateways: readonly { id: string; online: boolean; lastSeenMs: number | null }[], seenOnline: boolean): BenchSetup | null {
  if (gateways.length === 0) return { kind: 'no-gateway' };
  if (seenOnline || gateways.some((g) => g.online || g.lastSeenMs !== null)) return null;
  return { kind: 'not-connected', gateways: gateways.map((g) => g.id) };
}
