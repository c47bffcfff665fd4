import { Readable } from 'node:stream';
import { CsvError, parse } from 'csv-parse';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { CSV_PARSE_OPTIONS, RecordLines, splitHead, whereInBody } from './csv-records.ts';

type Read = { records: { fields: string[]; line: number; raw: string }[]; error: { line: number; message: string } | null };

async function* chunked(body: Buffer, cuts: number[]): AsyncGenerator<Uint8Array> {
  let from = 0;
  for (const cut of [...cuts.map((c) => c % (body.length + 1))].sort((a, b) => a - b)) {
    if (cut > from) yield body.subarray(from, cut);
    from = Math.max(from, cut);
  }
  if (from < body.length) yield body.subarray(from);
}

/** Records with csv-parse's own `info.lines`, or with RecordLines when `counted`. */
async function parseAll(chunks: AsyncIterable<Uint8Array>, counted: boolean, linesTaken: number, into: Read): Promise<void> {
  const lines = new RecordLines();
  try {
    for await (const rec of Readable.from(chunks).pipe(parse({ ...CSV_PARSE_OPTIONS, info: !counted })) as AsyncIterable<{ record: string[]; raw: string; info?: { lines: number } }>) {
      into.records.push({ fields: rec.record, line: linesTaken + (counted ? lines.next(rec.raw) : rec.info!.lines), raw: rec.raw });
    }
  } catch (err) {
    if (!(err instanceof CsvError)) throw err;
    into.error = whereInBody(err, linesTaken, -1);
  }
}

/** What the import read before: csv-parse over the whole body, lines from its `info`. */
async function whole(body: Buffer): Promise<Read> {
  const out: Read = { records: [], error: null };
  await parseAll(chunked(body, []), false, 0, out);
  return out;
}

async function split(body: Buffer, cuts: number[]): Promise<Read> {
  const { head, lines, rest } = await splitHead(chunked(body, cuts));
  const out: Read = { records: [...(head ?? [])], error: null };
  await parseAll(rest, true, lines, out);
  return out;
}

/**
 * The reader reads a record's text only for `#` lines ahead of the header, and trims it; after
 * the header only fields and lines count.
 */
function asReaderSees(r: Read): Read {
  const header = r.records.findIndex((x) => !(x.fields[0]!.trim().startsWith('#') || x.fields.every((f) => f.trim() === '')));
  return { ...r, records: r.records.map((x, i) => ({ ...x, raw: header < 0 || i < header ? x.raw.trim() : '' })) };
}

const HEAD = ['# fringewise counts csv v1', '# bench: mz-810 (Heralded MZ, 810 nm)', '# channel gw-1/a: role=out_a; label=Port A, left; efficiency=1', '', '   ', ',,', ' # spaced', '#quoted,"a, b"', '# "open', '#\rlone'];
const ROWS = ['t_ms,gw-1/a,x,cc', '1000,5,0.5,1', '1010,,0.6,', '1020,"7",0.7,0', '1030,8', '', '1040,"9\n9",1,1', '1045,"9\r\n9",1,1', '1050,"1"0,1,1', '1055,5\r,1', '\r', '1060,"unclosed', '#late,comment', '\uFEFFt_ms'];

describe('splitHead', () => {
  it('gives the records, lines and errors csv-parse gives reading the whole body with its own line numbers', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.array(fc.constantFrom(...HEAD), { maxLength: 6 }),
        fc.array(fc.constantFrom(...ROWS), { maxLength: 6 }),
        fc.array(fc.constantFrom('\n', '\r\n', '\r'), { minLength: 1, maxLength: 3 }),
        fc.boolean(),
        fc.boolean(),
        fc.array(fc.nat(400), { maxLength: 5 }),
        async (head, rows, ends, bom, endLast, cuts) => {
          const lines = [...head, ...rows];
          const text = lines.map((l, i) => l + (i < lines.length - 1 || endLast ? ends[i % ends.length] : '')).join('');
          const body = Buffer.from((bom ? '\uFEFF' : '') + text);
          const [before, now] = [asReaderSees(await whole(body)), asReaderSees(await split(body, cuts))];
          expect(now.error).toEqual(before.error);
          // Records parsed ahead of an error are dropped with it, as many as the chunks held: the
          // head, read apart, always arrives. Either is the start of the same records.
          const n = before.error ? Math.min(now.records.length, before.records.length) : Infinity;
          expect(now.records.slice(0, n)).toEqual(before.records.slice(0, n));
        },
      ),
      { numRuns: 2000 },
    );
  });

  it('takes the export metadata off, so csv-parse begins at the header', async () => {
    const body = Buffer.from('\uFEFF# fringewise counts csv v1\r\n# wavelength_nm: 810\r\n\r\nt_ms,a\r\n1000,5\r\n');
    const { head, lines, rest } = await splitHead(chunked(body, [3, 20]));
    expect(head).toEqual([
      { fields: ['# fringewise counts csv v1'], line: 1, raw: '# fringewise counts csv v1' },
      { fields: ['# wavelength_nm: 810'], line: 2, raw: '# wavelength_nm: 810' },
    ]);
    expect(lines).toBe(3);
    const restChunks: Uint8Array[] = [];
    for await (const c of rest) restChunks.push(c);
    expect(Buffer.concat(restChunks).toString()).toBe('t_ms,a\r\n1000,5\r\n');
  });

  it('counts an unclosed quote after the head from the start of the body', async () => {
    const body = Buffer.from('# fringewise counts csv v1\n# bench: b1 (B)\nt_ms,a\n1000,5\n1010,"6\n');
    const read = await split(body, []);
    expect(read.error).toEqual({ line: 5, message: 'Quote Not Closed: the parsing is finished with an opening quote at line 5' });
    expect(read.error).toEqual((await whole(body)).error);
  });
});

describe('RecordLines', () => {
  it('gives every record the line csv-parse reports, whatever its line ends, quotes and empty lines', async () => {
    const pieces = ['t_ms,a', '1,2', '', ' ', '"q"', '"a\nb"', '"a\r\nb"', 'x\ry', '\r', '\r\n', '"', 'a"b', '"x"y', ',,', '\uFEFF'];
    await fc.assert(
      fc.asyncProperty(fc.array(fc.constantFrom(...pieces), { maxLength: 12 }), fc.constantFrom('\n', '\r\n', '\r'), fc.boolean(), fc.array(fc.nat(200), { maxLength: 4 }), async (lines, end, endLast, cuts) => {
        const body = Buffer.from(lines.join(end) + (endLast ? end : ''));
        const own: Read = { records: [], error: null };
        const counted: Read = { records: [], error: null };
        await parseAll(chunked(body, cuts), false, 0, own);
        await parseAll(chunked(body, cuts), true, 0, counted);
        expect(counted).toEqual(own);
      }),
      { numRuns: 2000 },
    );
  });
});
