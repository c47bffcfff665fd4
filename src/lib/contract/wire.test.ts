import { describe, expect, it } from 'vitest';
import { ackSchema, countBatchSchema, decodePayload, MAX_EPOCH_MS, statusSchema } from './wire.ts';

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

describe('NUL characters', () => {
  const enc = (v: unknown) => new TextEncoder().encode(JSON.stringify(v));
  it('refuses stored text holding U+0000, with the field in the reason', () => {
    expect(decodePayload(enc({ v: 1, boot: 'a\u0000b', seq: 0, t0: 0, dt: 10, ch: { a: [1] } }), countBatchSchema)).toEqual({ ok: false, reason: 'boot: must not contain the NUL character (U+0000)' });
    expect(decodePayload(enc({ v: 1, state: 'online', software: 'gw\u0000' }), statusSchema)).toEqual({ ok: false, reason: 'software: must not contain the NUL character (U+0000)' });
    expect(decodePayload(enc({ v: 1, state: 'online', scan: { min: 0, max: 1, unit: '\u0000' } }), statusSchema)).toEqual({ ok: false, reason: 'scan.unit: must not contain the NUL character (U+0000)' });
    expect(decodePayload(enc({ v: 1, state: 'online', boot: '\u0000' }), statusSchema).ok).toBe(false);
    expect(decodePayload(enc({ v: 1, id: 'c1', ok: false, error: 'no\u0000' }), ackSchema)).toEqual({ ok: false, reason: 'error: must not contain the NUL character (U+0000)' });
    expect(decodePayload(enc({ v: 1, id: 'c\u00001', ok: true }), ackSchema).ok).toBe(false);
    expect(decodePayload(enc({ v: 1, id: 'c1', ok: false, error: 'out of range' }), ackSchema).ok).toBe(true);
  });

  // JSON lets "\ud800" stand alone (RFC 8259 §8.2 leaves its meaning open); it is no character,
  // UTF-8 cannot write it and PostgreSQL's jsonb refuses it.
  it('refuses stored text holding a lone surrogate, with the field in the reason', () => {
    const lone = 'must not contain a lone surrogate (\\ud800–\\udfff without its pair)';
    expect(decodePayload(enc({ v: 1, boot: 'a\ud800', seq: 0, t0: 0, dt: 10, ch: { a: [1] } }), countBatchSchema)).toEqual({ ok: false, reason: `boot: ${lone}` });
    expect(decodePayload(enc({ v: 1, state: 'online', software: 'gw \udc00' }), statusSchema)).toEqual({ ok: false, reason: `software: ${lone}` });
    expect(decodePayload(enc({ v: 1, state: 'online', scan: { min: 0, max: 1, unit: '\ud83d' } }), statusSchema)).toEqual({ ok: false, reason: `scan.unit: ${lone}` });
    expect(decodePayload(enc({ v: 1, state: 'online', boot: '\udfff' }), statusSchema).ok).toBe(false);
    expect(decodePayload(enc({ v: 1, id: 'c1', ok: false, error: 'x\ud800y' }), ackSchema)).toEqual({ ok: false, reason: `error: ${lone}` });
    // A pair is one character, and welcome.
    expect(decodePayload(enc({ v: 1, state: 'online', software: 'gw \u{1F52C}' }), statusSchema).ok).toBe(true);
  });

  it('writes out a NUL of a bad key in the reason, which is stored', () => {
    const d = decodePayload(enc({ v: 1, boot: 'b', seq: 0, t0: 0, dt: 10, ch: { 'a\u0000': [1] } }), countBatchSchema);
    expect(d.ok).toBe(false);
    if (!d.ok) expect(d.reason).toBe('ch.a\\u0000: bad channel key "a\\u0000"');
  });
});

describe('free text without a length in the contract', () => {
  const enc = (v: unknown) => new TextEncoder().encode(JSON.stringify(v));
  // The contract bounds the count batch's fields but not a status's software or unit nor an ack's
  // error: a long one is kept, cut at the stored length, instead of costing the whole message.
  it('keeps a long software name, unit and ack error, cut with an ellipsis', () => {
    const status = decodePayload(enc({ v: 1, state: 'online', software: 'g'.repeat(300), scan: { min: 0, max: 10, unit: 'volts on the piezo drive' } }), statusSchema);
    expect(status.ok && status.value.software).toBe('g'.repeat(99) + '…');
    expect(status.ok && status.value.scan?.unit).toBe('volts on the pi…');
    const ack = decodePayload(enc({ v: 1, id: 'c1', ok: false, error: 'e'.repeat(5_000) }), ackSchema);
    expect(ack.ok && ack.value.error).toBe('e'.repeat(999) + '…');
    const short = decodePayload(enc({ v: 1, id: 'c1', ok: false, error: 'out of range' }), ackSchema);
    expect(short.ok && short.value.error).toBe('out of range');
  });

  it('never cuts between the halves of a surrogate pair', () => {
    const status = decodePayload(enc({ v: 1, state: 'online', software: 'g'.repeat(98) + '\u{1F52C}'.repeat(5) }), statusSchema);
    expect(status.ok && status.value.software).toBe('g'.repeat(98) + '…');
    expect(status.ok && status.value.software?.isWellFormed()).toBe(true);
  });
});

describe('unknown fields', () => {
  const enc = (v: unknown) => new TextEncoder().encode(JSON.stringify(v));
  // The contract grows only by optional fields, so a version 1 reader must take a message carrying
  // fields it does not know, and leave them out.
  it('are ignored in every message a gateway sends', () => {
    const batch = decodePayload(enc({ v: 1, boot: 'b', seq: 0, t0: 0, dt: 10, ch: { a: [1] }, temp_c: 21.5, meta: { fw: 2 } }), countBatchSchema);
    expect(batch).toEqual({ ok: true, value: { v: 1, boot: 'b', seq: 0, t0: 0, dt: 10, ch: { a: [1] } } });
    const status = decodePayload(enc({ v: 1, state: 'online', uptime_s: 40, scan: { min: 0, max: 1, unit: 'V', slew: 3 } }), statusSchema);
    expect(status).toEqual({ ok: true, value: { v: 1, state: 'online', scan: { min: 0, max: 1, unit: 'V' } } });
    const ack = decodePayload(enc({ v: 1, id: 'c1', ok: true, took_ms: 12 }), ackSchema);
    expect(ack).toEqual({ ok: true, value: { v: 1, id: 'c1', ok: true } });
  });
});
