import { describe, expect, it } from 'vitest';
import { parseIsoDateTime, timeParam } from './time-params.ts';

const parse = (s: string) => timeParam.safeParse(s);

describe('timeParam', () => {
  it('takes whole ms since the epoch', () => {
    expect(parse('0').data).toBe(0);
    expect(parse(' 1796130000000 ').data).toBe(1_796_130_000_000);
  });

  it('takes ISO 8601 date and time with a zone', () => {
    expect(parse('2026-03-03T14:05:00Z').data).toBe(Date.UTC(2026, 2, 3, 14, 5));
    expect(parse('2026-03-03T14:05Z').data).toBe(Date.UTC(2026, 2, 3, 14, 5));
    expect(parse('2026-03-03T14:05:30.25+01:00').data).toBe(Date.UTC(2026, 2, 3, 13, 5, 30, 250));
    expect(parse('2026-03-03T14:05:30.123456789-05:30').data).toBe(Date.UTC(2026, 2, 3, 19, 35, 30, 123));
    expect(parse('2024-02-29T00:00:00z').data).toBe(Date.UTC(2024, 1, 29));
  });

  it.each([
    '-5', // Date.parse: 2001-05-01
    '1 2 3', // Date.parse: 2003-01-02
    'March 3',
    '1.5',
    '1e3',
    '2026-03-03', // no time, so no zone
    '2026-03-03T14:05:00', // no zone: would be the server's local time
    '2026-03-03 14:05:00Z',
    '2026-02-29T00:00Z',
    '2026-04-31T00:00Z',
    '2026-13-01T00:00Z',
    '2026-03-03T24:00Z',
    '2026-03-03T14:60Z',
    '2026-03-03T14:05+24:00',
    '1969-12-31T23:59:59Z', // before the epoch
    '0070-01-01T00:00Z', // not 1970
    '',
  ])('refuses %j with 422-worthy reason', (s) => {
    const r = parse(s);
    expect(r.success).toBe(false);
  });

  it('says what it takes', () => {
    expect(parse('March 3').error?.issues[0]?.message).toBe('"March 3" is neither whole ms since the epoch nor an ISO 8601 date and time with zone (2026-03-03T14:05:00Z)');
    expect(parse('99999999999999999999').error?.issues[0]?.message).toMatch(/past the last representable date/);
  });

  it('reads dates far from now', () => {
    expect(parseIsoDateTime('9999-12-31T23:59:59.999Z')).toBe(Date.UTC(9999, 11, 31, 23, 59, 59, 999));
    expect(parseIsoDateTime('1970-01-01T01:00+01:00')).toBe(0);
  });
});
