import { describe, expect, it } from 'vitest';
import { formatDateTime, parseLocalInput } from './format.ts';

describe('local time fields', () => {
  it('shows a time as YYYY-MM-DD HH:MM, 24 h, and reads it back', () => {
    const ms = new Date(2026, 11, 1, 21, 5).getTime();
    expect(formatDateTime(ms)).toBe('2026-12-01 21:05');
    expect(parseLocalInput('2026-12-01 21:05')).toBe(ms);
    expect(parseLocalInput(' 2026-12-01T21:05:30 ')).toBe(ms + 30_000);
  });

  it.each(['2026-02-30 10:00', '2026-12-01 24:00', '2026-12-01 10:60', '12/01/2026 09:20 PM', '2026-12-01', ''])('refuses %j', (text) => {
    expect(parseLocalInput(text)).toBeNull();
  });
});
