// The line protocol a microcontroller counter speaks to `--driver serial` (gateway/README.md):
//
//   HELLO v=1 dt=10 cols=t,a,b,h,x,cc      header: bin width and column order
//   123450 412 9 31 12.05 0                one line per bin, in `cols` order
//   # free text                            comment, ignored
//
// Pure: line framing, parsing and the mapping of device time to wall-clock bins. No I/O.
import { z } from 'zod';
import { MAX_COUNT, channelKeySchema } from '../../src/lib/contract/wire.ts';

/** Longest line accepted, bytes: a header with 64 channels fits; garbage without newlines does not grow memory. */
export const MAX_LINE = 1024;

export interface SerialHeader {
  /** Bin width, ms. */
  dt: number;
  /** Channel keys in column order (after `t`). */
  keys: string[];
  hasX: boolean;
  hasCc: boolean;
}

export interface SerialBin {
  /** Bin start on the device's clock, ms. */
  t: number;
  counts: number[];
  x?: number;
  cc?: number;
}

export type SerialLine =
  | { kind: 'skip' }
  | { kind: 'header'; header: SerialHeader }
  | { kind: 'bin'; bin: SerialBin }
  | { kind: 'error'; reason: string };

const headerSchema = z.object({
  v: z.literal('1', { errorMap: () => ({ message: 'unsupported protocol version (want v=1)' }) }),
  dt: z
    .string()
    .regex(/^\d{1,5}$/, 'dt must be a whole number of ms')
    .transform(Number)
    .pipe(z.number().int().min(1).max(60_000)),
  cols: z
    .string()
    .transform((s) => s.split(','))
    .superRefine((cols, ctx) => {
      if (cols[0] !== 't') ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'cols must start with t' });
      const rest = cols.slice(1).filter((c) => c !== 'x' && c !== 'cc');
      if (rest.length === 0) ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'cols need at least one channel' });
      for (const c of rest) if (!channelKeySchema.safeParse(c).success) ctx.addIssue({ code: z.ZodIssueCode.custom, message: `bad channel key "${c.slice(0, 20)}"` });
      if (new Set(cols).size !== cols.length) ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'cols repeat a name' });
      const tail = cols.slice(1 + rest.length);
      const order = ['x', 'cc'].filter((c) => cols.includes(c));
      if (tail.join() !== order.join()) ctx.addIssue({ code: z.ZodIssueCode.custom, message: 'x and cc come last, in that order' });
    }),
});

const int = (max: number, what: string) =>
  z
    .string()
    .regex(/^\d{1,16}$/, `${what} must be a whole number ≥ 0`)
    .transform(Number)
    .pipe(z.number().max(max, `${what} above ${max}`));
const timeField = int(Number.MAX_SAFE_INTEGER, 't');
const countField = int(MAX_COUNT, 'count');
const ccField = int(MAX_COUNT, 'cc');
const xField = z
  .string()
  .regex(/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/, 'x must be a decimal number')
  .transform(Number)
  .pipe(z.number().finite('x must be finite'));

function firstIssue(err: z.ZodError): string {
  return err.issues[0]?.message ?? 'invalid';
}

/** Parses one line (without its newline); `header` is the last header seen, if any. */
export function parseSerialLine(line: string, header: SerialHeader | null): SerialLine {
  const text = line.trim();
  if (text === '' || text.startsWith('#')) return { kind: 'skip' };
  const fields = text.split(/[\s]+/);
  if (fields[0] === 'HELLO') {
    const pairs: [string, string][] = [];
    for (const f of fields.slice(1)) {
      const eq = f.indexOf('=');
      if (eq <= 0) return { kind: 'error', reason: `header field "${f.slice(0, 30)}" is not key=value` };
      pairs.push([f.slice(0, eq), f.slice(eq + 1)]);
    }
    // Names from the device: own properties only, so a field "__proto__" cannot set the prototype.
    const parsed = headerSchema.safeParse(Object.fromEntries(pairs));
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      return { kind: 'error', reason: `bad HELLO: ${issue?.path.join('.') ?? ''} ${firstIssue(parsed.error)}`.trim() };
    }
    const cols = parsed.data.cols;
    return {
      kind: 'header',
      header: { dt: parsed.data.dt, keys: cols.slice(1).filter((c) => c !== 'x' && c !== 'cc'), hasX: cols.includes('x'), hasCc: cols.includes('cc') },
    };
  }
  if (!header) return { kind: 'error', reason: 'data before the first HELLO line' };
  const want = 1 + header.keys.length + (header.hasX ? 1 : 0) + (header.hasCc ? 1 : 0);
  if (fields.length !== want) return { kind: 'error', reason: `expected ${want} fields, got ${fields.length}` };
  const t = timeField.safeParse(fields[0]);
  if (!t.success) return { kind: 'error', reason: firstIssue(t.error) };
  const counts: number[] = [];
  for (let i = 0; i < header.keys.length; i++) {
    const c = countField.safeParse(fields[1 + i]);
    if (!c.success) return { kind: 'error', reason: `${header.keys[i]}: ${firstIssue(c.error)}` };
    counts.push(c.data);
  }
  const bin: SerialBin = { t: t.data, counts };
  let at = 1 + header.keys.length;
  if (header.hasX) {
    const x = xField.safeParse(fields[at++]);
    if (!x.success) return { kind: 'error', reason: firstIssue(x.error) };
    bin.x = x.data;
  }
  if (header.hasCc) {
    const cc = ccField.safeParse(fields[at]);
    if (!cc.success) return { kind: 'error', reason: firstIssue(cc.error) };
    bin.cc = cc.data;
  }
  return { kind: 'bin', bin };
}

/**
 * Splits a byte stream into lines (LF or CRLF). A line longer than MAX_LINE is reported once
 * and discarded up to its newline, so a wrong baud rate cannot grow memory.
 */
export class LineSplitter {
  private buf = '';
  private overlong = false;

  constructor(
    private readonly onLine: (line: string) => void,
    private readonly onOverlong: () => void,
  ) {}

  push(chunk: string): void {
    let start = 0;
    for (let nl = chunk.indexOf('\n'); nl >= 0; nl = chunk.indexOf('\n', start)) {
      const piece = chunk.slice(start, nl);
      start = nl + 1;
      if (this.overlong || this.buf.length + piece.length > MAX_LINE) {
        if (!this.overlong) this.onOverlong();
        this.overlong = false;
        this.buf = '';
        continue;
      }
      const line = this.buf + piece;
      this.buf = '';
      this.onLine(line.endsWith('\r') ? line.slice(0, -1) : line);
    }
    const rest = chunk.slice(start);
    if (this.overlong) return;
    if (this.buf.length + rest.length > MAX_LINE) {
      this.overlong = true;
      this.buf = '';
      this.onOverlong();
    } else this.buf += rest;
  }
}

/**
 * Maps the device's clock (ms since its start, free-running) to bin starts on the gateway's
 * NTP-disciplined clock, as the contract's `t0` requires. The first bin is anchored at the bin
 * that just ended; later bins keep the device's spacing, so bins are never merged or invented.
 * The anchor moves only forward, to the wall clock, and only when the device restarts (its time
 * runs backwards), `dt` changes, or the mapping falls more than `maxSkewMs` behind the wall clock
 * (a crystal 50 ppm slow lags 1 s in 5.5 h): that leaves a gap in time, never a bin time used
 * twice. A device clock running fast cannot be pulled back without reusing bin times; it is
 * reported (`ahead`) and shows as clock offset on the gateway's health page.
 */
export class DeviceClock {
  private anchor = 0;
  private devRef = 0;
  private dt = 0;
  private lastEnd = 0;

  /** `maxSkewMs`: drift tolerated before re-anchoring, ms; 1 s is far above serial latency. */
  constructor(private readonly maxSkewMs = 1000) {}

  /** Bin start (ms since the epoch, a multiple of `dt`) for device time `t`; null for a bin time already used. */
  map(t: number, dt: number, nowMs: number): { t0: number; event?: 'reanchored' | 'ahead' } | null {
    const expected = nowMs - dt;
    const idx = Math.round((t - this.devRef) / dt);
    let t0 = this.anchor + idx * dt;
    let event: 'reanchored' | 'ahead' | undefined;
    if (dt !== this.dt || idx < 0 || t0 < expected - this.maxSkewMs) {
      if (this.dt !== 0) event = 'reanchored';
      this.dt = dt;
      this.anchor = Math.max(Math.floor(expected / dt) * dt, Math.ceil(this.lastEnd / dt) * dt);
      this.devRef = t;
      t0 = this.anchor;
    } else if (t0 > expected + this.maxSkewMs) event = 'ahead';
    if (t0 < this.lastEnd) return null;
    this.lastEnd = t0 + dt;
    return event ? { t0, event } : { t0 };
  }
}
