import { describe, expect, it } from 'vitest';
import { COINCIDENCE_WINDOW_NS, coincidenceWindowSchema, formatWindow } from './coincidence-window.ts';
import { NUMBER_HINT } from './form-number.ts';

const parse = (v: unknown) => coincidenceWindowSchema.safeParse({ coincidenceWindowNs: v });
const message = (v: unknown) => {
  const r = parse(v);
  return r.success ? null : r.error.issues.map((i) => i.message).join('; ');
};

describe('coincidence window', () => {
  it('takes a form field in ns, bounds included', () => {
    expect(parse('2').data).toEqual({ coincidenceWindowNs: 2 });
    expect(parse(' 0.35 ').data).toEqual({ coincidenceWindowNs: 0.35 });
    expect(parse(String(COINCIDENCE_WINDOW_NS.min)).success).toBe(true);
    expect(parse(String(COINCIDENCE_WINDOW_NS.max)).success).toBe(true);
    expect(parse(120).data).toEqual({ coincidenceWindowNs: 120 });
  });

  it('refuses 0 and negatives: g2(0) divides by the accidentals, which the window scales', () => {
    expect(message('0')).toMatch(/below 0.01 ns/);
    expect(message('-2')).toMatch(/below 0.01 ns/);
    expect(message('0.002')).toMatch(/give it in ns/);
  });

  it('refuses windows past 1 µs (a slip of units, and R·τ_c ≪ 1 no longer holds)', () => {
    expect(message('1000.5')).toMatch(/above 1000 ns/);
    expect(message('2000')).toMatch(/give it in ns/);
  });

  it('refuses what is not a number, an empty box included', () => {
    for (const v of ['abc', 'NaN', 'Infinity', null, '2 ns', '0,35']) expect(message(v), String(v)).toBe(NUMBER_HINT);
    expect(message('')).toBe('enter a number');
    expect(message(undefined)).toBe('enter a number');
  });

  it('is shown with at least two significant figures', () => {
    expect(formatWindow(2)).toBe('window 2.0 ns');
    expect(formatWindow(12.5)).toBe('window 12.5 ns');
    expect(formatWindow(120)).toBe('window 120 ns');
    expect(formatWindow(0.25)).toBe('window 0.25 ns');
    expect(formatWindow(0.05)).toBe('window 0.050 ns');
    expect(formatWindow(0.01)).toBe('window 0.010 ns');
  });
});
