import { describe, expect, it } from 'vitest';
import { countBatchSchema, decodePayload, MAX_EPOCH_MS } from './wire.ts';

const batch = (t0: number, n = 10, dt = 1000) => JSON.stringify({ v: 1, boot: 'b', seq: 0, t0, dt, ch: { a: Array.from({ length: n }, () => 1) } });
const decode = (s: string) => decodePayload(new TextEncoder().encode(s), countBatchSchema);

describe('count batch times', () => {
  // ECMAScript, "Time Values and Time Range": a Date holds ±8.64e15 ms around the epoch.
  it('takes MAX_EPOCH_MS as the last instant a Date holds', () => {
    expect(new Date(MAX_EPOCH_MS).getTime()).toBe(MAX_EPOCH_MS);
    expect(Number.isNaN(new Date(MAX_EPOCH_MS + 1).getTime())).toBe(true);
  });

  it('accepts bins that end on the last date and refuses bins that end past it', () => {
    expect(decode(batch(MAX_EPOCH_MS - 10_000)).ok).toBe(true);
    const past = decode(batch(MAX_EPOCH_MS - 9_000));
    expect(past).toEqual({ ok: false, reason: 't0: the bins end past the last representable date' });
    expect(decode(batch(9_007_199_254_740_000, 1, 1)).ok).toBe(false);
  });
});
