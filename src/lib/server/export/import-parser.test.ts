import { describe, expect, it } from 'vitest';
import type { Slice } from '../ingest/coverage.ts';
import { CountsCsvReader } from './import-parser.ts';

function read(lines: string[]): { reader: CountsCsvReader; batches: Slice[] } {
  const batches: Slice[] = [];
  const reader = new CountsCsvReader((s) => batches.push(s));
  lines.forEach((l, i) => reader.record(l.split(','), i + 1, l));
  reader.end(lines.length);
  return { reader, batches };
}

describe('CountsCsvReader', () => {
  it('reads an empty cell as no bin, and starts a new batch where the channels present change', () => {
    const { reader, batches } = read(['t_ms,g1/a,g2/h,x', '1000,5,,0.5', '1010,6,,0.6', '1020,7,9,0.7', '1030,,8,']);
    expect(reader.issues).toEqual([]);
    expect(batches).toEqual([
      { t0: 1000, dt: 10, n: 2, keys: ['a'], channels: [[5, 6]], x: [0.5, 0.6], cc: null },
      { t0: 1020, dt: 10, n: 1, keys: ['a', 'h'], channels: [[7], [9]], x: [0.7], cc: null },
      { t0: 1030, dt: 10, n: 1, keys: ['h'], channels: [[8]], x: null, cc: null },
    ]);
  });

  it('takes columns of several gateways with one key as one channel when they never share a row', () => {
    const { reader, batches } = read(['# wavelength_nm: 632.8', '# bench: red-1 (Red bench)', 't_ms,gw-1/a,imp-4/a', '1000,,3', '1010,,4', '1030,5,']);
    expect(reader.issues).toEqual([]);
    expect(reader.channels.map((c) => [c.key, c.column])).toEqual([['a', 'gw-1/a']]);
    expect(batches.map((b) => [b.t0, b.channels])).toEqual([
      [1000, [[3, 4]]],
      [1030, [[5]]],
    ]);
    expect([reader.wavelengthNm, reader.sourceBench]).toEqual([632.8, 'red-1']);
  });

  it('refuses a row with counts in two columns of one key, and a row without counts', () => {
    const { reader } = read(['t_ms,gw-1/a,imp-4/a', '1000,1,', '1010,1,2', '1020,,']);
    expect(reader.issues).toEqual([
      { line: 3, message: 'columns "gw-1/a" and "imp-4/a" both have a count for the channel key "a": rename one' },
      { line: 4, message: 'no channel has a count in this row' },
    ]);
  });

  it('after a refused row says only why it was refused, not also that the file has no data rows', () => {
    expect(read(['t_ms,a,b', '1000,3,x']).reader.issues).toEqual([{ line: 2, message: 'b: "x" is not a count (integer 0…2^31−1)' }]);
    expect(read(['t_ms,a,b']).reader.issues).toEqual([{ line: 1, message: 'no data rows' }]);
  });
});
