// Reading a counts CSV recorded offline, pure: records in (already split by csv-parse), batches
// and line-numbered errors out. Accepts the export format (with `#` metadata) or a plain table
// `t_ms,<channel>…[,x][,cc]` where a channel column is `<gateway>/<key>` or just `<key>`.
//
// Rules: t_ms integer ms, strictly increasing; the first two rows are adjacent bins and fix the
// bin width dt; later rows are dt apart or a whole number of dt later (a gap); the first t_ms is
// a multiple of dt (the contract's rule for t0). Every channel cell is an integer count in
// 0…2^31−1, x a finite number, cc an integer ≥ 0. An empty cell is no bin of that channel at that
// time (as the export writes it where a gateway has none); a row needs at least one count.
//
// An import is one recording under one pseudo-gateway, so a channel is its key: columns of
// several gateways with the same key (an export over a live gateway's time and an earlier
// import's, say) are one channel, as long as no row has a count in two of them.
import { channelKeySchema, MAX_BINS, MAX_COUNT, MAX_EPOCH_MS } from '../../contract/wire.ts';
import { parseChannelLine } from '../../counts-csv.ts';
import type { ImportIssue } from '../../import-shapes.ts';
import type { Slice } from '../ingest/coverage.ts';

export type { ImportIssue };

export interface ChannelInfo {
  /** The first column of the key (a file may hold the key under several gateways). */
  column: string;
  key: string;
  /** From the export's `# channel` line, when the file has one. */
  label: string | null;
  darkRate: number | null;
  darkRateErr: number | null;
  deadTimeNs: number | null;
  deadTimeModel: 'nonparalyzable' | 'paralyzable' | null;
  efficiency: number | null;
}

/** Stop collecting after this many errors: the first ones are what a person fixes first. */
const MAX_ISSUES = 20;

const num = (s: string | undefined) => (s === undefined || s === '' ? null : Number.isFinite(Number(s)) ? Number(s) : null);

const DIGITS = /^\d+$/;

/** The batch being built: contiguous rows with the same channels, x and cc present. */
interface OpenBatch {
  t0: number;
  /** Per channel, whether this batch holds its counts; `present` lists those channels. */
  has: boolean[];
  /** Indices into `channels` of the keys with counts, and their counts bin by bin. */
  present: number[];
  counts: number[][];
  x: number[] | null;
  cc: number[] | null;
  n: number;
}

export class CountsCsvReader {
  readonly issues: ImportIssue[] = [];
  channels: ChannelInfo[] = [];
  hasX = false;
  hasCc = false;
  dt: number | null = null;
  firstT: number | null = null;
  lastT: number | null = null;
  /** Rows read into the recording. */
  rows = 0;
  /** Data rows in the file, refused ones too: a file whose rows were all refused is not one without rows. */
  private dataRows = 0;
  /** From the export's `# wavelength_nm:` and `# bench:` lines; null in a plain table. */
  wavelengthNm: number | null = null;
  sourceBench: string | null = null;
  private meta = new Map<string, Record<string, string>>();
  private header: string[] | null = null;
  private xCol = -1;
  private ccCol = -1;
  /** Per channel, its columns in the file. */
  private chanCols: number[][] = [];
  /** The row being read, a count or null per channel: one array for every row, its counts copied into the batch. */
  private values: (number | null)[] = [];
  private cur: OpenBatch | null = null;

  /** `onBatch` receives each completed batch (≤ 10,000 bins, contiguous). */
  constructor(private readonly onBatch: (slice: Slice) => void) {}

  get failed(): boolean {
    return this.issues.length > 0;
  }

  get full(): boolean {
    return this.issues.length >= MAX_ISSUES;
  }

  private issue(line: number, message: string): void {
    if (this.issues.length < MAX_ISSUES) this.issues.push({ line, message });
  }

  /** One record: its fields and its first line number in the file (1-based). */
  record(fields: string[], line: number, raw: string): void {
    const first = (fields[0] ?? '').trim();
    if (first.startsWith('#')) {
      if (this.header) return;
      this.readComment(raw);
      return;
    }
    if (fields.every((f) => f.trim() === '')) return;
    if (!this.header) return this.readHeader(fields.map((f) => f.trim()), line);
    this.dataRows++;
    this.readRow(fields, line);
  }

  private readComment(raw: string): void {
    const ch = parseChannelLine(raw);
    if (ch) return void this.meta.set(ch.column, ch.fields);
    const wl = /^#\s*wavelength_nm:\s*(\S+)\s*$/.exec(raw.trim());
    if (wl) return void (this.wavelengthNm = num(wl[1]));
    const bench = /^#\s*bench:\s*([a-z0-9][a-z0-9-]{0,39})(\s|$)/.exec(raw.trim());
    if (bench) this.sourceBench = bench[1]!;
  }

  private readHeader(cols: string[], line: number): void {
    this.header = cols;
    if (cols[0] !== 't_ms') this.issue(line, `the first column must be t_ms (found "${cols[0]?.slice(0, 30) ?? ''}")`);
    cols.forEach((c, i) => {
      if (i === 0) return;
      if (c === 'x') return void (this.xCol = i);
      if (c === 'cc') return void (this.ccCol = i);
      const key = c.includes('/') ? c.slice(c.lastIndexOf('/') + 1) : c;
      if (!channelKeySchema.safeParse(key).success) return this.issue(line, `column "${c.slice(0, 40)}": a channel key must match [a-z0-9_]{1,16}`);
      const known = this.channels.findIndex((ch) => ch.key === key);
      if (known >= 0) return void this.chanCols[known]!.push(i);
      const m = this.meta.get(c) ?? {};
      const model = m['dead_time_model'];
      this.chanCols.push([i]);
      this.channels.push({
        column: c,
        key,
        label: m['label'] ?? null,
        darkRate: num(m['dark_rate_cps']),
        darkRateErr: num(m['dark_rate_err_cps']),
        deadTimeNs: num(m['dead_time_ns']),
        deadTimeModel: model === 'paralyzable' || model === 'nonparalyzable' ? model : null,
        efficiency: num(m['efficiency']),
      });
    });
    this.hasX = this.xCol > 0;
    this.hasCc = this.ccCol > 0;
    this.values = this.chanCols.map(() => null);
    if (this.chanCols.length === 0) this.issue(line, 'no channel columns after t_ms');
  }

  private readRow(fields: string[], line: number): void {
    const cols = this.header!;
    if (fields.length !== cols.length) return this.issue(line, `${fields.length} cells, the header has ${cols.length}`);
    const tCell = fields[0]!.trim();
    const t = Number(tCell);
    if (!DIGITS.test(tCell) || !Number.isSafeInteger(t)) return this.issue(line, `t_ms "${tCell.slice(0, 30)}" is not a whole number of ms`);
    // Room for one bin of the contract's widest (60 s) after it: its end must still be a date.
    if (t > MAX_EPOCH_MS - 60_000) return this.issue(line, `t_ms ${t} is past the last representable date`);
    const values = this.values;
    let anyCount = false;
    for (let k = 0; k < this.chanCols.length; k++) {
      const chCols = this.chanCols[k]!;
      let value: number | null = null;
      let from = -1;
      for (let c = 0; c < chCols.length; c++) {
        const i = chCols[c]!;
        const s = fields[i]!.trim();
        if (s === '') continue;
        const v = Number(s);
        if (!DIGITS.test(s) || v > MAX_COUNT) return this.issue(line, `${cols[i]}: "${s.slice(0, 30)}" is not a count (integer 0…2^31−1)`);
        if (value !== null) return this.issue(line, `columns "${cols[from]}" and "${cols[i]}" both have a count for the channel key "${this.channels[k]!.key}": rename one`);
        value = v;
        from = i;
      }
      values[k] = value;
      if (value !== null) anyCount = true;
    }
    if (!anyCount) return this.issue(line, 'no channel has a count in this row');
    let x: number | null = null;
    if (this.hasX) {
      const s = fields[this.xCol]!.trim();
      if (s !== '') {
        x = Number(s);
        if (!Number.isFinite(x)) return this.issue(line, `x: "${s.slice(0, 30)}" is not a number`);
      }
    }
    let cc: number | null = null;
    if (this.hasCc) {
      const s = fields[this.ccCol]!.trim();
      if (s !== '') {
        cc = Number(s);
        if (!DIGITS.test(s) || cc > MAX_COUNT) return this.issue(line, `cc: "${s.slice(0, 30)}" is not a count`);
      }
    }
    if (this.lastT !== null) {
      const step = t - this.lastT;
      if (step <= 0) return this.issue(line, `t_ms ${t} is not after the previous row's ${this.lastT}`);
      if (this.dt === null) {
        this.dt = step;
        if (step > 60_000) return this.issue(line, `bin width ${step} ms is above the contract's 60000 ms`);
        if (this.firstT! % step !== 0) return this.issue(line, `the first t_ms ${this.firstT} is not a multiple of the bin width ${step} ms`);
      } else if (step % this.dt !== 0) {
        return this.issue(line, `t_ms ${t} is ${step} ms after the previous row, not a multiple of the bin width ${this.dt} ms`);
      }
      if (step !== this.dt || !this.cur || !this.sameShape(this.cur, x, cc) || this.cur.n >= MAX_BINS) this.flush();
    } else {
      this.firstT = t;
    }
    this.lastT = t;
    this.rows++;
    if (this.failed) return; // keep validating, stop building
    if (!this.cur) {
      const has = values.map((v) => v !== null);
      const present = has.flatMap((h, k) => (h ? [k] : []));
      this.cur = { t0: t, has, present, counts: present.map(() => []), x: x === null ? null : [], cc: cc === null ? null : [], n: 0 };
    }
    const open = this.cur;
    for (let j = 0; j < open.present.length; j++) open.counts[j]!.push(values[open.present[j]!]!);
    if (x !== null) open.x!.push(x);
    if (cc !== null) open.cc!.push(cc);
    open.n++;
  }

  /** A batch holds the same channels (and x, cc) in every bin: a row of another shape starts a new one. */
  private sameShape(open: OpenBatch, x: number | null, cc: number | null): boolean {
    if ((x === null) !== (open.x === null) || (cc === null) !== (open.cc === null)) return false;
    for (let k = 0; k < open.has.length; k++) if ((this.values[k] !== null) !== open.has[k]) return false;
    return true;
  }

  private flush(): void {
    const c = this.cur;
    this.cur = null;
    if (!c || this.failed || this.dt === null) return;
    // Keys sorted, as the ingest stores them, so imported and live rows have the same shape.
    const order = c.present.map((k, j) => ({ key: this.channels[k]!.key, j })).sort((a, b) => (a.key < b.key ? -1 : 1));
    this.onBatch({ t0: c.t0, dt: this.dt, n: c.n, keys: order.map((o) => o.key), channels: order.map(({ j }) => c.counts[j]!), x: c.x, cc: c.cc });
  }

  /** Call once after the last record. */
  end(lastLine: number): void {
    if (!this.header) this.issue(lastLine, 'no header row (t_ms,<channel>,…) found');
    else if (this.dataRows === 0) this.issue(lastLine, 'no data rows');
    else if (this.rows === 1 && !this.failed) this.issue(lastLine, 'one row only: the bin width needs at least two adjacent rows');
    else this.flush();
  }
}
