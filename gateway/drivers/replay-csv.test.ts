import { parse } from 'csv-parse/sync';
import { describe, expect, it } from 'vitest';
import { ReplayParser, replayColumns } from './replay-csv.ts';
import type { ReplayBin } from './replay-csv.ts';

const EXPORT = `# Fringewise export
# bench: mz-810, from 2026-12-01T00:00:00Z, step 10 ms
t_ms,gw-810/a,gw-810/b,gw-810/h,x,cc
1796130000000,412,9,31,12.00,0
1796130000010,398,14,30,12.05,1
1796130000020,405,11,,12.10,0
1796130000040,401,12,29,,2
`;

function run(text: string, source?: string, dt?: number): { bins: ReplayBin[]; errors: string[] } {
  const records = parse(text, { comment: '#', comment_no_infix: true, skip_empty_lines: true, relax_column_count: true, trim: true }) as string[][];
  const p = new ReplayParser(replayColumns(records[0]!, source), dt);
  const bins: ReplayBin[] = [];
  const errors: string[] = [];
  for (const row of [...records.slice(1).map((r) => p.row(r)), p.end()]) {
    if (row.kind === 'bins') bins.push(...row.bins);
    else errors.push(row.reason);
  }
  return { bins, errors };
}

describe('replay CSV', () => {
  it('reads the export format: channel columns of one gateway, x and cc; an empty cell leaves a gap', () => {
    const { bins, errors } = run(EXPORT);
    expect(errors).toEqual([]);
    expect(bins).toEqual([
      { t: 1796130000000, counts: [412, 9, 31], x: 12, cc: 0 },
      { t: 1796130000010, counts: [398, 14, 30], x: 12.05, cc: 1 },
      { t: 1796130000040, counts: [401, 12, 29], cc: 2 },
    ]);
  });

  it('maps columns by name and picks a gateway when the file holds several', () => {
    const header = ['t_ms', 'gw-1/a', 'gw-2/a', 'gw-1/b', 'x'];
    expect(() => replayColumns(header)).toThrow(/gw-1, gw-2: pick one with --source/);
    expect(replayColumns(header, 'gw-1')).toEqual({ source: 'gw-1', keys: ['a', 'b'], at: [1, 3], xAt: 4, ccAt: null });
    expect(() => replayColumns(header, 'gw-3')).toThrow(/no channels of gw-3/);
    expect(() => replayColumns(['time', 'gw-1/a'])).toThrow(/first column must be t_ms/);
    expect(() => replayColumns(['t_ms', 'a'])).toThrow(/not <gateway>\/<key>/);
  });

  it('reports bad rows and carries on', () => {
    const { bins, errors } = run(`t_ms,g/a\n0,1\n10,2\n15,3\n10,4\n20,-5\n30,6.5\nabc,1\n40,7\n`);
    expect(bins.map((b) => b.counts[0])).toEqual([1, 2, 7]);
    expect(errors).toEqual([
      't_ms 15 is off the 10 ms grid',
      't_ms 10 does not come after 10',
      'a: counts must be whole numbers ≥ 0',
      'a: counts must be whole numbers ≥ 0',
      't_ms must be whole ms',
    ]);
  });

  it('needs --dt for a single row', () => {
    expect(run('t_ms,g/a\n100,1\n').errors).toEqual(['a single row cannot fix the bin width: pass --dt']);
    expect(run('t_ms,g/a\n100,1\n', undefined, 100).bins).toEqual([{ t: 100, counts: [1] }]);
  });
});
