import { describe, expect, it } from 'vitest';
import { parseChannelLine } from './counts-csv.ts';

describe('parseChannelLine', () => {
  it('reads the fields of a channel line', () => {
    expect(parseChannelLine('# channel gw-1/a: label=Output A; role=out_a')).toEqual({ column: 'gw-1/a', fields: { label: 'Output A', role: 'out_a' } });
    expect(parseChannelLine('t_ms,gw-1/a')).toBeNull();
  });

  it('keeps field names from the file as plain fields, never as the prototype or inherited names', () => {
    const line = parseChannelLine('# channel gw-1/a: __proto__=x; constructor=y; label=A')!;
    expect(Object.entries(line.fields)).toEqual([
      ['__proto__', 'x'],
      ['constructor', 'y'],
      ['label', 'A'],
    ]);
    expect(Object.getPrototypeOf(line.fields)).toBe(Object.prototype);
  });
});
