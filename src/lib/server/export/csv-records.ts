// How the import reads a counts CSV's records, and the line of each, with csv-parse.
//
// The lines ahead of the header (the export's `#` metadata) are read apart: csv-parse takes its
// first record's number of fields as every record's, and under relax_column_count builds a
// CsvError (two stack traces, JSON copies of the record) for each record with another number.
// After the export's one-field `# fringewise counts csv v1` line that was every data row: most of
// the time a check or an import took. So the head is taken off the body and csv-parse begins at
// the header. Only plain lines are taken, which csv-parse would split at every comma, up to a
// plain header: no quote, each ended as the first line is (csv-parse keeps the first line end it
// meets for the whole body); otherwise csv-parse reads the whole body, as it always did.
import type { CsvError, Options } from 'csv-parse';

/** Lines ahead of the header are split off up to this many bytes (an export's are about 1 kB). */
export const MAX_HEAD_BYTES = 1024 * 1024;

/** A line ahead of the header: its fields, its line number in the body, its text. */
export interface HeadRecord {
  fields: string[];
  line: number;
  raw: string;
}

/** How the import reads CSV: each record with its text (`raw`), which gives its line (RecordLines). */
export const CSV_PARSE_OPTIONS: Options = { relax_column_count: true, relax_quotes: true, raw: true, skip_empty_lines: true, bom: true };

/**
 * The line csv-parse gives each record (its `info.lines`), counted from the records' text instead:
 * the `info` option builds two objects per record, a third of a check's profile. csv-parse
 * counts a line at each character it reads after a \r or a \n. A record's text holds every
 * character it read for the record, skipped empty lines included, and ends with the character
 * that ended it (a line end's first, or the body's last); the record's line is the count reached
 * before that last character.
 */
export class RecordLines {
  private breaks = 0;

  /** The line of the next record, from its text; call once per record, in order. */
  next(raw: string): number {
    let n = 0;
    for (let i = raw.indexOf('\n'); i >= 0; i = raw.indexOf('\n', i + 1)) n++;
    for (let i = raw.indexOf('\r'); i >= 0; i = raw.indexOf('\r', i + 1)) n++;
    const last = raw.charCodeAt(raw.length - 1);
    const line = 1 + this.breaks + n - (last === 0x0a || last === 0x0d ? 1 : 0);
    this.breaks += n;
    return line;
  }
}

async function* restOf(first: Uint8Array, chunks: AsyncGenerator<Uint8Array>): AsyncGenerator<Uint8Array> {
  if (first.byteLength) yield first;
  yield* chunks;
}

/**
 * Reads the body up to its header line. `head` holds the records csv-parse would have made of the
 * lines before it (null: csv-parse must read the whole body, head included); `rest` is what
 * csv-parse reads; `lines` counts the lines taken off, blank ones included, which go before
 * csv-parse's own line numbers.
 */
export async function splitHead(chunks: AsyncGenerator<Uint8Array>): Promise<{ head: HeadRecord[] | null; lines: number; rest: AsyncGenerator<Uint8Array> }> {
  let buf = Buffer.alloc(0);
  let pos = 0;
  let lines = 0;
  let crlfEnds: boolean | null = null;
  const head: HeadRecord[] = [];
  const whole = () => ({ head: null, lines: 0, rest: restOf(buf, chunks) });
  for (;;) {
    const nl = buf.indexOf(0x0a, pos);
    if (nl < 0) {
      if (buf.byteLength > MAX_HEAD_BYTES) return whole();
      const next = await chunks.next();
      if (next.done) return whole();
      buf = Buffer.concat([buf, next.value]);
      continue;
    }
    const crlf = nl > pos && buf[nl - 1] === 0x0d;
    crlfEnds ??= crlf;
    const line = buf.toString('utf8', pos, crlf ? nl - 1 : nl);
    // csv-parse drops a byte order mark at the start of the body (`bom`).
    const text = pos === 0 && line.startsWith('\uFEFF') ? line.slice(1) : line;
    const fields = text.split(',');
    // A quote may hold commas and line ends; and begun at the header, csv-parse must meet the
    // line end it met at the start of the body.
    if (crlf !== crlfEnds || text.includes('\r') || text.includes('"')) return whole();
    // What the reader skips ahead of the header: `#` lines and lines without a value.
    if (!(fields[0]!.trim().startsWith('#') || fields.every((f) => f.trim() === ''))) {
      if (head.length === 0) return { head, lines: 0, rest: restOf(buf, chunks) };
      // Begun there, csv-parse would drop a byte order mark, which reading the whole body keeps.
      return text.startsWith('\uFEFF') ? whole() : { head, lines, rest: restOf(buf.subarray(pos), chunks) };
    }
    lines++;
    // csv-parse skips empty lines (`skip_empty_lines`) but counts them.
    if (text !== '') head.push({ fields, line: lines, raw: text });
    pos = nl + 1;
  }
}

/** A csv-parse error's line, and its message, counted from the start of the body. */
export function whereInBody(err: CsvError, linesTaken: number, fallback: number): { line: number; message: string } {
  const at = (err as { lines?: number }).lines;
  return {
    line: at === undefined ? fallback : linesTaken + at,
    message: err.message.replace(/\bline (\d+)/, (_, n: string) => `line ${linesTaken + Number(n)}`),
  };
}
