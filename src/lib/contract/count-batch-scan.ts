// A count batch read straight from the payload's bytes, for the ingest's hot path. TextDecoder,
// JSON.parse and the schema walk took 9–12 µs per 4 × 100-count batch here, a quarter of the
// server's time per message at saturation (DEVELOPERS.md, "Ingest benchmark"); this scan ~5.6 µs.
//
// It only ever accepts. It takes the plain form gateways write (ASCII, integer counts written as
// digits, no escapes, no unknown or repeated keys) and checks every rule of `countBatchSchema`
// on the way; anything else — a rule broken, or a valid batch in a form it does not take — returns
// null, and the caller decodes with the schema, which gives the reason. So what it accepts is a
// subset of what the schema accepts, with equal values (count-batch-scan.test.ts checks both against each other).
import { CONTRACT_VERSION, MAX_BIN_MS, MAX_BINS, MAX_COUNT, MAX_EPOCH_MS, MAX_PAYLOAD_BYTES, type CountBatch } from './wire.ts';

const QUOTE = 0x22;
const COMMA = 0x2c;
const MINUS = 0x2d;
const DOT = 0x2e;
const ZERO = 0x30;
const NINE = 0x39;
const COLON = 0x3a;
const OPEN_ARRAY = 0x5b;
const BACKSLASH = 0x5c;
const CLOSE_ARRAY = 0x5d;
const UNDERSCORE = 0x5f;
const LOWER_A = 0x61;
const LOWER_E = 0x65;
const LOWER_Z = 0x7a;
const OPEN_OBJECT = 0x7b;
const CLOSE_OBJECT = 0x7d;
const UPPER_E = 0x45;
const PLUS = 0x2b;

/** Thrown inside the scan when the payload leaves the plain form; caught once at the top. */
const NOT_PLAIN = Symbol('not plain');

/** Up to this many digits, a digit string is an exact integer in a double (2^53 has 16). */
const MAX_INT_DIGITS = 15;
/** 10^0 … 10^15, each exact in a double. */
const POWERS_OF_TEN = Array.from({ length: MAX_INT_DIGITS + 1 }, (_, k) => Number(`1e${k}`));

// The scan's bytes and position, read directly by the readers of the few top-level tokens. One
// scan runs at a time (it never yields).
/**
 * Arrays are read into these and copied out at their exact length: grown by push, each 100-count
 * array left three outgrown stores behind, ~40 % of what the saturated server allocated
 * (DEVELOPERS.md, "Ingest benchmark"). Counts and positions apart, so the counts' store keeps
 * small-integer elements and its copies do too.
 */
const COUNT_SCRATCH: number[] = Array.from({ length: MAX_BINS }, () => 0);
const NUMBER_SCRATCH: number[] = Array.from({ length: MAX_BINS }, () => 0.5);
const NO_BYTES = new Uint8Array(0);
let p: Uint8Array = NO_BYTES;
let i = 0;

/** JSON whitespace: space, line feed, carriage return, tab. */
function isSpace(c: number | undefined): boolean {
  return c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09;
}

function ws(): void {
  while (isSpace(p[i])) i++;
}

function expect(byte: number): void {
  ws();
  if (p[i] !== byte) throw NOT_PLAIN;
  i++;
}

/** True and past it when the next byte (after whitespace) is `byte`. */
function take(byte: number): boolean {
  ws();
  if (p[i] !== byte) return false;
  i++;
  return true;
}

/** A string of printable ASCII without escapes. */
function readString(): string {
  expect(QUOTE);
  const start = i;
  let c = p[i];
  while (c !== QUOTE) {
    if (c === undefined || c < 0x20 || c > 0x7e || c === BACKSLASH) throw NOT_PLAIN;
    c = p[++i];
  }
  let s = '';
  for (let k = start; k < i; k++) s += String.fromCharCode(p[k]!);
  i++;
  return s;
}

/** A key of [a-z0-9_]{1,16}: the channel key rule, which every top-level key also meets. */
function readKey(): string {
  expect(QUOTE);
  let s = '';
  let c = p[i];
  while (c !== QUOTE) {
    if (!((c! >= LOWER_A && c! <= LOWER_Z) || (c! >= ZERO && c! <= NINE) || c === UNDERSCORE) || s.length === 16) throw NOT_PLAIN;
    s += String.fromCharCode(c!);
    c = p[++i];
  }
  if (s.length === 0) throw NOT_PLAIN;
  i++;
  expect(COLON);
  return s;
}

/** A non-negative integer written as plain digits (no sign, fraction, exponent or leading zero), at most `max`. */
function readUint(max: number): number {
  ws();
  const start = i;
  let v = 0;
  let c = p[i];
  while (c !== undefined && c >= ZERO && c <= NINE) {
    v = v * 10 + (c - ZERO);
    c = p[++i];
  }
  const digits = i - start;
  // 16 digits may round in the last step, but only to 2^53 or more, which every max is below.
  if (digits === 0 || digits > 16 || (digits > 1 && p[start] === ZERO)) throw NOT_PLAIN;
  if (c === DOT || c === LOWER_E || c === UPPER_E || v > max) throw NOT_PLAIN;
  return v;
}

// The array readers below run over hundreds of elements per batch, so they work on local copies
// of the scan's state (module-level variables cost about twice as much per byte read here), each
// with its own loop: one loop shared through a per-element callback would not be inlined for both.

/** Past `[`; true, and past `]` too, when the array is empty. Once per array, so on the shared state. */
function openArray(): boolean {
  expect(OPEN_ARRAY);
  return take(CLOSE_ARRAY);
}

/** `[uint, …]`: each element plain digits, at most MAX_COUNT; at most MAX_BINS of them. */
function readCounts(): number[] {
  if (openArray()) return [];
  const out = COUNT_SCRATCH;
  let len = 0;
  const b = p;
  let at = i;
  let c = b[at];
  for (;;) {
    while (isSpace(c)) c = b[++at];
    const start = at;
    let v = 0;
    while (c !== undefined && c >= ZERO && c <= NINE) {
      v = v * 10 + (c - ZERO);
      c = b[++at];
    }
    const digits = at - start;
    // MAX_COUNT has 10 digits; a fraction, exponent or sign leaves the plain form below.
    if (digits === 0 || digits > 10 || (digits > 1 && b[start] === ZERO) || v > MAX_COUNT || len === MAX_BINS) throw NOT_PLAIN;
    out[len++] = v;
    // Gateways mostly write no spaces: the comma is looked for before any whitespace.
    if (c === COMMA) {
      c = b[++at];
      continue;
    }
    while (isSpace(c)) c = b[++at];
    if (c === COMMA) c = b[++at];
    else if (c === CLOSE_ARRAY) {
      i = at + 1;
      return out.slice(0, len);
    } else throw NOT_PLAIN;
  }
}

/**
 * `[number, …]`, each in JSON's full number grammar and valued as JSON.parse values it. With at
 * most 15 significant digits and no exponent, the digits as an integer divided by a power of ten
 * is one correctly rounded operation on exact operands, so it equals the correctly rounded
 * decimal (Clinger, "How to read floating point numbers accurately", PLDI 1990); other forms go
 * through Number() of their text. A value past the largest double leaves the plain form.
 */
function readNumbers(): number[] {
  if (openArray()) return [];
  const out = NUMBER_SCRATCH;
  let len = 0;
  const b = p;
  let at = i;
  let c = b[at];
  for (;;) {
    while (isSpace(c)) c = b[++at];
    const start = at;
    const negative = c === MINUS;
    if (negative) c = b[++at];
    let mantissa = 0;
    let significant = 0;
    let fraction = 0;
    if (c === ZERO) c = b[++at];
    else {
      const from = at;
      while (c !== undefined && c >= ZERO && c <= NINE) {
        mantissa = mantissa * 10 + (c - ZERO);
        c = b[++at];
      }
      if (at === from) throw NOT_PLAIN;
      significant = at - from;
    }
    if (c === DOT) {
      c = b[++at];
      const from = at;
      while (c !== undefined && c >= ZERO && c <= NINE) {
        mantissa = mantissa * 10 + (c - ZERO);
        c = b[++at];
      }
      if (at === from) throw NOT_PLAIN;
      fraction = at - from;
      significant += fraction;
    }
    let v: number;
    if (c !== LOWER_E && c !== UPPER_E && significant <= MAX_INT_DIGITS) {
      v = mantissa / POWERS_OF_TEN[fraction]!;
      if (negative) v = -v;
    } else {
      if (c === LOWER_E || c === UPPER_E) {
        c = b[++at];
        if (c === PLUS || c === MINUS) c = b[++at];
        const from = at;
        while (c !== undefined && c >= ZERO && c <= NINE) c = b[++at];
        if (at === from) throw NOT_PLAIN;
      }
      let text = '';
      for (let k = start; k < at; k++) text += String.fromCharCode(b[k]!);
      v = Number(text);
      if (!Number.isFinite(v)) throw NOT_PLAIN;
    }
    // Longer than any channel may be: the contract's check says so.
    if (len === MAX_BINS) throw NOT_PLAIN;
    out[len++] = v;
    while (isSpace(c)) c = b[++at];
    if (c === COMMA) c = b[++at];
    else if (c === CLOSE_ARRAY) {
      i = at + 1;
      return out.slice(0, len);
    } else throw NOT_PLAIN;
  }
}

/** `{ key: counts, … }`: at least one channel, all of one length (at least 1), no key twice. */
function readChannels(): { ch: Record<string, number[]>; n: number } {
  expect(OPEN_OBJECT);
  const ch: Record<string, number[]> = {};
  let n = -1;
  do {
    const key = readKey();
    // Assigning "__proto__" would set the prototype, where JSON.parse makes an own property.
    if (key === '__proto__' || Object.hasOwn(ch, key)) throw NOT_PLAIN;
    const counts = readCounts();
    if (counts.length === 0 || (n >= 0 && counts.length !== n)) throw NOT_PLAIN;
    n = counts.length;
    ch[key] = counts;
  } while (take(COMMA));
  expect(CLOSE_OBJECT);
  return { ch, n };
}

/** The batch in `payload` when it is in the plain form and keeps every rule; null to decode it the general way. */
export function scanCountBatch(payload: Uint8Array): CountBatch | null {
  if (payload.byteLength > MAX_PAYLOAD_BYTES) return null;
  p = payload;
  i = 0;
  let v: number | undefined, boot: string | undefined, seq: number | undefined, t0: number | undefined, dt: number | undefined;
  let channels: { ch: Record<string, number[]>; n: number } | undefined, x: number[] | undefined, cc: number[] | undefined;
  try {
    expect(OPEN_OBJECT);
    do {
      const key = readKey();
      switch (key) {
        case 'v':
          if (v !== undefined) return null;
          v = readUint(CONTRACT_VERSION);
          break;
        case 'boot':
          if (boot !== undefined) return null;
          boot = readString();
          break;
        case 'seq':
          if (seq !== undefined) return null;
          seq = readUint(Number.MAX_SAFE_INTEGER);
          break;
        case 't0':
          if (t0 !== undefined) return null;
          t0 = readUint(MAX_EPOCH_MS);
          break;
        case 'dt':
          if (dt !== undefined) return null;
          dt = readUint(MAX_BIN_MS);
          break;
        case 'ch':
          if (channels !== undefined) return null;
          channels = readChannels();
          break;
        case 'x':
          if (x !== undefined) return null;
          x = readNumbers();
          break;
        case 'cc':
          if (cc !== undefined) return null;
          cc = readCounts();
          break;
        default:
          return null;
      }
    } while (take(COMMA));
    expect(CLOSE_OBJECT);
    ws();
    if (i !== payload.length) return null;
  } catch (e) {
    if (e === NOT_PLAIN) return null;
    throw e;
  } finally {
    // The payload's buffer is the broker's: not kept alive past the scan.
    p = NO_BYTES;
  }
  if (v !== CONTRACT_VERSION || boot === undefined || boot.length < 1 || boot.length > 32 || seq === undefined || t0 === undefined || dt === undefined || dt < 1 || !channels) return null;
  const { ch, n } = channels;
  if ((x && x.length !== n) || (cc && cc.length !== n) || t0 % dt !== 0 || t0 + n * dt > MAX_EPOCH_MS) return null;
  const batch: CountBatch = { v: CONTRACT_VERSION, boot, seq, t0, dt, ch };
  if (x) batch.x = x;
  if (cc) batch.cc = cc;
  return batch;
}
