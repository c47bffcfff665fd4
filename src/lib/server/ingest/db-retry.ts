// Keeps the live path alive across a PostgreSQL restart: a write that fails for a connection reason
// is retried with backoff while the caller keeps holding its data (and the gateway its PUBACK).
const FIRST_DELAY_MS = 100;
const MAX_DELAY_MS = 5_000;

/** True for failures that a later retry can fix: lost connection, server starting or stopping, overload. */
export function isTransientDbError(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  // The pool was closed on purpose (shutdown): retrying would never end.
  if (err instanceof Error && err.message.includes('after calling end on the pool')) return false;
  if (typeof code !== 'string') return true; // socket-level failures ("Connection terminated") carry no SQLSTATE
  return (
    code.startsWith('08') || // connection exception
    code.startsWith('57P') || // admin shutdown, crash shutdown, cannot connect now
    code === '53300' || // too many connections
    code === '40001' || // serialization failure
    code === '40P01' || // deadlock detected
    code.startsWith('E') // Node errno codes: ECONNREFUSED, ECONNRESET, ETIMEDOUT…
  );
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Runs `fn` until it succeeds or fails for a non-transient reason (which is thrown). Never gives up on transient ones. */
export async function withDbRetry<T>(what: string, fn: () => Promise<T>): Promise<T> {
  let delay = FIRST_DELAY_MS;
  let warned = false;
  for (;;) {
    try {
      const out = await fn();
      if (warned) console.warn(`[ingest] ${what}: database back, write done`);
      return out;
    } catch (err) {
      if (!isTransientDbError(err)) throw err;
      if (!warned) console.warn(`[ingest] ${what}: database unavailable (${err instanceof Error ? err.message : String(err)}); holding data and retrying`);
      warned = true;
      await sleep(delay);
      delay = Math.min(MAX_DELAY_MS, delay * 2);
    }
  }
}
