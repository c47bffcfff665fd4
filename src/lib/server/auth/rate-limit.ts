// Sign-in throttling per account and per client address: a fixed budget that refills over a window.
// In memory: a restart resets it, which is acceptable for brute-force throttling on a lab server.

export interface Limiter {
  /** True when the key may try now; records the attempt. */
  consume(key: string): boolean;
  /** Gives back the key's latest attempt: it succeeded, so it was no guess. */
  refund(key: string): void;
  reset(key: string): void;
}

export function createLimiter(max: number, windowMs: number): Limiter {
  const hits = new Map<string, number[]>();
  return {
    consume(key) {
      const now = Date.now();
      const recent = (hits.get(key) ?? []).filter((t) => now - t < windowMs);
      if (recent.length >= max) {
        hits.set(key, recent);
        return false;
      }
      recent.push(now);
      hits.set(key, recent);
      if (hits.size > 10_000) hits.delete(hits.keys().next().value as string);
      return true;
    },
    refund(key) {
      hits.get(key)?.pop();
    },
    reset(key) {
      hits.delete(key);
    },
  };
}

const KEY = Symbol.for('fringewise.signinLimiters');
type Holder = { [KEY]?: { account: Limiter; address: Limiter } };

/** 5 failed tries per account per 15 min, 20 per address per 15 min (a lab behind one address signs in often). */
export function signInLimiters(): { account: Limiter; address: Limiter } {
  const holder = globalThis as Holder;
  holder[KEY] ??= { account: createLimiter(5, 15 * 60_000), address: createLimiter(20, 15 * 60_000) };
  return holder[KEY];
}
