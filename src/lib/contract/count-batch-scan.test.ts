// The byte scan against the schema decoder (JSON.parse + countBatchSchema, the reference): what
// the scan accepts, the schema accepts with an equal value; valid batches in the plain form are
// all taken by the scan. Number values are checked against JSON.parse (ECMA-404 grammar,
// ECMAScript's correctly rounded string-to-number conversion).
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { scanCountBatch } from './count-batch-scan.ts';
import { countBatchSchema, decodePayload, MAX_COUNT } from './wire.ts';

const bytes = (s: string) => new TextEncoder().encode(s);
const reference = (p: Uint8Array) => decodePayload(p, countBatchSchema);

/**
 * Equal as decoded JSON: same prototype, same own keys in the same order, numbers by Object.is
 * (so -0 ≠ 0). Not toStrictEqual: it compares `constructor` properties, and "constructor" is a
 * valid channel key whose arrays are equal but not the same.
 */
function same(a: unknown, b: unknown): boolean {
  if (typeof a !== 'object' || a === null || typeof b !== 'object' || b === null) return Object.is(a, b);
  if (Object.getPrototypeOf(a) !== Object.getPrototypeOf(b)) return false;
  const ka = Reflect.ownKeys(a);
  const kb = Reflect.ownKeys(b);
  return ka.length === kb.length && ka.every((k, i) => k === kb[i] && same((a as Record<PropertyKey, unknown>)[k], (b as Record<PropertyKey, unknown>)[k]));
}

/** The scan agrees with the reference: null, or the reference's accepted value. */
function agrees(p: Uint8Array): ReturnType<typeof scanCountBatch> {
  const scanned = scanCountBatch(p);
  if (scanned) {
    const ref = reference(p);
    expect(ref.ok).toBe(true);
    if (ref.ok && !same(ref.value, scanned)) expect(scanned).toEqual(ref.value);
    expect(ref.ok && same(ref.value, scanned)).toBe(true);
  }
  return scanned;
}

const channelKey = fc.stringMatching(/^[a-z0-9_]{1,16}$/);
const count = fc.oneof(fc.integer({ min: 0, max: 50 }), fc.integer({ min: 0, max: MAX_COUNT }), fc.constantFrom(0, MAX_COUNT));

/** A valid batch as an object, with channels of equal length and t0 on its grid. */
const validBatch = fc
  .record({
    n: fc.integer({ min: 1, max: 40 }),
    keys: fc.uniqueArray(channelKey, { minLength: 1, maxLength: 5 }),
    dt: fc.integer({ min: 1, max: 60_000 }),
    slot: fc.integer({ min: 0, max: 2e9 }),
    boot: fc.string({ minLength: 1, maxLength: 32 }),
    seq: fc.integer({ min: 0, max: Number.MAX_SAFE_INTEGER }),
    withX: fc.boolean(),
    withCc: fc.boolean(),
  })
  .chain(({ n, keys, dt, slot, boot, seq, withX, withCc }) =>
    fc.record({
      v: fc.constant(1),
      boot: fc.constant(boot),
      seq: fc.constant(seq),
      t0: fc.constant(slot * dt),
      dt: fc.constant(dt),
      ch: fc.tuple(...keys.map(() => fc.array(count, { minLength: n, maxLength: n }))).map((arrays) => Object.fromEntries(keys.map((k, i) => [k, arrays[i]!]))),
      ...(withX && { x: fc.array(fc.double({ noNaN: true, noDefaultInfinity: true }), { minLength: n, maxLength: n }) }),
      ...(withCc && { cc: fc.array(count, { minLength: n, maxLength: n }) }),
    }),
  );

/** JSON whitespace between tokens, as some gateways write it. */
const spaced = (json: string, ws: string) => json.replace(/([{}[\]:,])/g, `${ws}$1${ws}`);

describe('count batch byte scan', () => {
  it('takes every valid batch in the plain form, with the value the schema gives', () => {
    fc.assert(
      fc.property(validBatch, fc.constantFrom('', ' ', '\n', '\t ', '\r\n'), (b, ws) => {
        // Spacing goes around every structural character, inside boot too when it holds any.
        const plain = /^[\x20-\x7e]*$/.test(b.boot) && !/["\\]/.test(b.boot) && (ws === '' || !/[{}[\]:,]/.test(b.boot));
        const json = spaced(JSON.stringify(b), ws);
        const scanned = agrees(bytes(json));
        // The key "__proto__" and boots with escapes or non-ASCII are left to the schema.
        if (plain && !('__proto__' in b.ch && Object.hasOwn(b.ch, '__proto__'))) expect(scanned).not.toBeNull();
      }),
      { numRuns: 2_000 },
    );
  });

  it('accepts nothing the schema refuses, and nothing with another value: mutated batches', () => {
    const edit = fc.record({ at: fc.nat(), op: fc.constantFrom('delete', 'insert', 'replace'), ch: fc.constantFrom(...'0123456789-+.eE,:[]{}" \\\u00e9\u0000ax_'.split('')) });
    fc.assert(
      fc.property(validBatch, fc.array(edit, { minLength: 1, maxLength: 3 }), (b, edits) => {
        let s = JSON.stringify(b);
        for (const e of edits) {
          const at = e.at % (s.length + 1);
          s = e.op === 'delete' ? s.slice(0, at) + s.slice(at + 1) : e.op === 'insert' ? s.slice(0, at) + e.ch + s.slice(at) : s.slice(0, at) + e.ch + s.slice(at + 1);
        }
        agrees(bytes(s));
      }),
      { numRuns: 10_000 },
    );
  });

  it('accepts nothing the schema refuses: arbitrary bytes', () => {
    fc.assert(fc.property(fc.uint8Array({ maxLength: 200 }), (p) => void agrees(p)), { numRuns: 5_000 });
  });

  // Forms JSON.parse reads to a valid value that the scan leaves to the schema, or that the
  // schema refuses; each must come out the same either way.
  it.each([
    ['a count of -0 (JSON.parse gives -0)', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[-0]}}'],
    ['a count with a fraction part', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1.0]}}'],
    ['a count with an exponent', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1e2]}}'],
    ['a leading zero (not JSON)', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[01]}}'],
    ['a repeated top-level key (JSON.parse keeps the last)', '{"v":1,"boot":"b","seq":0,"t0":0,"t0":5,"dt":1,"ch":{"a":[1]}}'],
    ['a repeated channel', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1],"a":[2]}}'],
    ['the channel key __proto__', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"__proto__":[1]}}'],
    ['an unknown key (the schema drops it)', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]},"note":"x"}'],
    ['a byte order mark (TextDecoder drops it)', '\ufeff{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]}}'],
    ['an escape in boot', '{"v":1,"boot":"\\u0062","seq":0,"t0":0,"dt":1,"ch":{"a":[1]}}'],
    ['an empty boot', '{"v":1,"boot":"","seq":0,"t0":0,"dt":1,"ch":{"a":[1]}}'],
    ['t0 off the grid', '{"v":1,"boot":"b","seq":0,"t0":3,"dt":2,"ch":{"a":[1]}}'],
    ['channels of unequal length', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1],"b":[1,2]}}'],
    ['an x past the largest double', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]},"x":[1e400]}'],
    ['a count above 2^31 − 1', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[2147483648]}}'],
    ['trailing text', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]}} x'],
    ['no channels', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{}}'],
    ['an empty channel', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[]}}'],
    ['the last bins a Date can hold (16-digit t0)', '{"v":1,"boot":"b","seq":0,"t0":8639999999999998,"dt":1,"ch":{"a":[1,1]}}'],
    ['bins one past the last date', '{"v":1,"boot":"b","seq":0,"t0":8639999999999999,"dt":1,"ch":{"a":[1,1]}}'],
    ['seq at Number.MAX_SAFE_INTEGER', '{"v":1,"boot":"b","seq":9007199254740991,"t0":0,"dt":1,"ch":{"a":[1]}}'],
    ['seq at 2^53', '{"v":1,"boot":"b","seq":9007199254740992,"t0":0,"dt":1,"ch":{"a":[1]}}'],
    ['an x of -0 (JSON.parse gives -0)', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]},"x":[-0]}'],
    ['an x with 17 fraction digits', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]},"x":[0.00000000000000001]}'],
    ['integer-like channel keys (JSON.parse orders them first)', '{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"b":[1],"10":[2],"2":[3]}}'],
  ])('%s', (_what, json) => void agrees(bytes(json)));

  it('takes those boundary batches the schema accepts, with their values', () => {
    expect(agrees(bytes('{"v":1,"boot":"b","seq":0,"t0":8639999999999998,"dt":1,"ch":{"a":[1,1]}}'))?.t0).toBe(8639999999999998);
    expect(agrees(bytes('{"v":1,"boot":"b","seq":9007199254740991,"t0":0,"dt":1,"ch":{"a":[1]}}'))?.seq).toBe(Number.MAX_SAFE_INTEGER);
    expect(Object.is(agrees(bytes('{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[1]},"x":[-0]}'))?.x?.[0], -0)).toBe(true);
    expect(scanCountBatch(bytes('{"v":1,"boot":"b","seq":0,"t0":8639999999999999,"dt":1,"ch":{"a":[1,1]}}'))).toBeNull();
    expect(scanCountBatch(bytes('{"v":1,"boot":"b","seq":9007199254740992,"t0":0,"dt":1,"ch":{"a":[1]}}'))).toBeNull();
  });

  it('reads x values as JSON.parse does, on both of its paths', () => {
    // Values chosen to stress rounding: the double nearest 0.1, the largest and the smallest
    // subnormal double (IEEE 754), a 17-digit shortest form, negative zero, 15- and 16-digit forms.
    const xs = ['0.1', '-0.0', '0.30000000000000004', '1.7976931348623157e308', '5e-324', '123456789012345', '1234567890123456', '0.000123', '-2.5E-3', '999999999999999.9'];
    const json = `{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[${xs.map(() => 1).join(',')}]},"x":[${xs.join(',')}]}`;
    const scanned = agrees(bytes(json));
    expect(same(scanned?.x, JSON.parse(`[${xs.join(',')}]`))).toBe(true);
    fc.assert(
      fc.property(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true }), { minLength: 1, maxLength: 20 }), (x) => {
        const text = `{"v":1,"boot":"b","seq":0,"t0":0,"dt":1,"ch":{"a":[${x.map(() => 0).join(',')}]},"x":${JSON.stringify(x)}}`;
        expect(same(agrees(bytes(text))?.x, JSON.parse(JSON.stringify(x)))).toBe(true);
      }),
      { numRuns: 2_000 },
    );
  });
});
