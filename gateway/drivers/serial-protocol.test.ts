import { describe, expect, it } from 'vitest';
import { DeviceClock, LineSplitter, MAX_LINE, parseSerialLine } from './serial-protocol.ts';
import type { SerialHeader } from './serial-protocol.ts';

const header: SerialHeader = { dt: 10, keys: ['a', 'b', 'h'], hasX: true, hasCc: true };

describe('parseSerialLine', () => {
  it('reads a header with channels, x and cc', () => {
    expect(parseSerialLine('HELLO v=1 dt=10 cols=t,a,b,h,x,cc', null)).toEqual({ kind: 'header', header });
    expect(parseSerialLine('HELLO v=1 dt=1 cols=t,a', null)).toEqual({ kind: 'header', header: { dt: 1, keys: ['a'], hasX: false, hasCc: false } });
  });

  it('reads a bin line in column order, tolerating CR, tabs and extra spaces', () => {
    expect(parseSerialLine(' 123450\t412  9 31 12.05 0 ', header)).toEqual({ kind: 'bin', bin: { t: 123450, counts: [412, 9, 31], x: 12.05, cc: 0 } });
    expect(parseSerialLine('7 1 2 3 -1.5e-1 4', header)).toEqual({ kind: 'bin', bin: { t: 7, counts: [1, 2, 3], x: -0.15, cc: 4 } });
  });

  it('reads a header field named "__proto__" as an ignored field', () => {
    expect(parseSerialLine('HELLO __proto__=x toString=1 v=1 dt=1 cols=t,a', null)).toEqual({ kind: 'header', header: { dt: 1, keys: ['a'], hasX: false, hasCc: false } });
    expect(Object.keys(Object.prototype)).toEqual([]);
  });

  it('skips blank and comment lines', () => {
    expect(parseSerialLine('', header)).toEqual({ kind: 'skip' });
    expect(parseSerialLine('# firmware 2.3, gate 10 ms', null)).toEqual({ kind: 'skip' });
  });

  it.each([
    ['HELLO v=2 dt=10 cols=t,a', 'version'],
    ['HELLO v=1 dt=0 cols=t,a', 'dt'],
    ['HELLO v=1 dt=10 cols=a,b', 'start with t'],
    ['HELLO v=1 dt=10 cols=t,x', 'at least one channel'],
    ['HELLO v=1 dt=10 cols=t,A', 'bad channel key'],
    ['HELLO v=1 dt=10 cols=t,a,a', 'repeat'],
    ['HELLO v=1 dt=10 cols=t,a,cc,x', 'x and cc come last'],
    ['HELLO v=1 dt=10 cols', 'key=value'],
  ])('reports a bad header %j', (line, reason) => {
    const parsed = parseSerialLine(line, null);
    expect(parsed.kind).toBe('error');
    expect(parsed.kind === 'error' && parsed.reason).toContain(reason);
  });

  it.each([
    ['1 2 3', 'expected 6 fields'],
    ['1 2 3 4 5 6 7', 'expected 6 fields'],
    ['-1 2 3 4 5 6', 't must be'],
    ['1 2 -3 4 5 6', 'b: count must be'],
    ['1 2 3.5 4 5 6', 'b: count must be'],
    ['1 2 3 2147483648 5 6', 'h: count above'],
    ['1 2 3 4 NaN 6', 'x must be'],
    ['1 2 3 4 1e999 6', 'x must be finite'],
    ['1 2 3 4 5 x', 'whole number'],
  ])('reports a bad bin line %j without throwing', (line, reason) => {
    const parsed = parseSerialLine(line, header);
    expect(parsed.kind).toBe('error');
    expect(parsed.kind === 'error' && parsed.reason).toContain(reason);
  });

  it('reports data that comes before any header', () => {
    expect(parseSerialLine('1 2 3', null)).toEqual({ kind: 'error', reason: 'data before the first HELLO line' });
  });
});

describe('LineSplitter', () => {
  it('joins lines across chunks, strips CR and drops an overlong line once', () => {
    const lines: string[] = [];
    let overlong = 0;
    const s = new LineSplitter((l) => lines.push(l), () => overlong++);
    s.push('HEL');
    s.push('LO v=1\r\n1 2');
    s.push(' 3\n' + 'z'.repeat(MAX_LINE));
    s.push('zzzz');
    s.push('zz\n4 5 6\n');
    expect(lines).toEqual(['HELLO v=1', '1 2 3', '4 5 6']);
    expect(overlong).toBe(1);
  });
});

describe('DeviceClock', () => {
  it('anchors the first bin at the bin that just ended and keeps the device spacing', () => {
    const c = new DeviceClock();
    const now = 1_796_130_000_057;
    expect(c.map(5000, 10, now)).toEqual({ t0: 1_796_130_000_040 });
    expect(c.map(5010, 10, now + 10)).toEqual({ t0: 1_796_130_000_050 });
    // A lost line leaves a gap, it does not shift later bins.
    expect(c.map(5030, 10, now + 30)).toEqual({ t0: 1_796_130_000_070 });
  });

  it('refuses a repeated device time', () => {
    const c = new DeviceClock();
    c.map(100, 10, 1_000_000);
    c.map(110, 10, 1_000_010);
    expect(c.map(110, 10, 1_000_020)).toBeNull();
  });

  it('re-anchors forward, never onto bins already mapped, when the device restarts or lags', () => {
    const c = new DeviceClock(1000);
    const first = c.map(90_000, 10, 2_000_000)!.t0;
    c.map(90_010, 10, 2_000_010);
    // Device restarted: its time went back to 0.
    const restarted = c.map(0, 10, 2_000_015)!;
    expect(restarted.event).toBe('reanchored');
    expect(restarted.t0).toBeGreaterThanOrEqual(first + 20);
    // A slow device clock: 2 s of wall time pass during 10 ms of device time.
    const lag = c.map(10, 10, 2_002_030)!;
    expect(lag).toEqual({ t0: 2_002_020, event: 'reanchored' });
    // A fast one is reported, not pulled back.
    expect(c.map(3000, 10, 2_002_050)!.event).toBe('ahead');
  });
});
