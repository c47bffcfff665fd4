import { describe, expect, it } from 'vitest';
import { formNumber, NUMBER_HINT } from './form-number.ts';

describe('formNumber', () => {
  it('reads decimal points, exponents and surrounding spaces', () => {
    expect(formNumber().parse('0.8')).toBe(0.8);
    expect(formNumber().parse(' -1.5e3 ')).toBe(-1500);
    expect(formNumber().parse(3)).toBe(3);
  });

  it.each(['0,8', '1,000', 'abc', 'Infinity'])('refuses %j with what to type instead', (typed) => {
    const parsed = formNumber().safeParse(typed);
    expect(parsed.success).toBe(false);
    expect(parsed.error?.issues[0]?.message).toBe(NUMBER_HINT);
  });

  it('takes an empty box as no number, not 0', () => {
    expect(formNumber().safeParse('  ').error?.issues[0]?.message).toBe('enter a number');
    expect(formNumber().safeParse(undefined).error?.issues[0]?.message).toBe('enter a number');
  });
});
