// Reading a counts CSV recorded offline, pure: records in (already split by csv-parse), batches
// and line-numbered errors out. Accepts the export format (with `#` metadata) or a plain table
// `t_ms,<channel>…[,x][,cc]` where a channel column is `<gateway>/<key>` or just `<key>`.
//
// Rules: t_ms integer ms, strictly increasing; the first two rows are adjacent bins and fix the
// bin width dt; later rows are dt apart or a whole number of dt later (a gap); the first t_ms is
// a multiple of dt (the contract's rule for t0). Every channel cell is an integer count in
// 0…2^31−1, x a finite number, cc an integer ≥ 0. No empty cells.
import { channelKeySchema, MAX_BINS, MAX_COUNT, MAX_EPOCH_MS } from '../../contract/wire.ts';
import { parseChannelLine } from '../../counts-csv.ts';
import type { ImportIssue } from '../../import-shapes.ts';
import type { Slice } from '../ingest/coverage.ts';

export type { ImportIssue };

export interface ChannelInfo {
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

export class CountsCsvReader {
  readonly issues: ImportIssue[] = [];
  channels: ChannelInfo[] = [];
  hasX = false;
  hasCc = false;
  dt: number | null = null;
  firstT: number | null = null;
  lastT: number | null = null;
  rows = 0;
  private meta = new Map<string, Record<string, string>>();
  private header: string[] | null = null;
  private xCol = -1;
  private ccCol = -1;
  private chanCols: number[] = [];
  private cur: { t0: number; counts: number[][]; x: number[]; cc: number[] } | null = null;

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
      const ch = parseChannelLine(raw);
      if (ch) this.meta.set(ch.column, ch.fields);
      return;
    }
    if (fields.every((f) => f.trim() === '')) return;
    if (!this.header) return this.readHeader(fields.map((f) => f.trim()), line);
    this.readRow(fields, line);
  }

  private readHeader(cols: string[], line: number): void {
    this.header = cols;
    if (cols[0] !== 't_ms') this.issue(line, `the first column must be t_ms (found "${cols[0]?.slice(0, 30) ?? ''}")`);
    const seen = new Map<string, string>();
    cols.forEach((c, i) => {
      if (i === 0) return;
      if (c === 'x') return void (this.xCol = i);
      if (c === 'cc') return void (this.ccCol = i);
      const key = c.includes('/') ? c.slice(c.lastIndexOf('/') + 1) : c;
      if (!channelKeySchema.safeParse(key).success) return this.issue(line, `column "${c.slice(0, 40)}": a channel key must match [a-z0-9_]{1,16}`);
      if (seen.has(key)) return this.issue(line, `columns "${seen.get(key)}" and "${c}" share the channel key "${key}": rename one`);
      seen.set(key, c);
      const m = this.meta.get(c) ?? {};
      const model = m['dead_time_model'];
      this.chanCols.push(i);
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
    if (this.chanCols.length === 0) this.issue(line, 'no channel columns after t_ms');
  }

  private readRow(fields: string[], line: number): void {
    const cols = this.header!;
    if (fields.length !== cols.length) return this.issue(line, `${fields.length} cells, the header has ${cols.length}`);
    const cell = (i: number) => (fields[i] ?? '').trim();
    const t = Number(cell(0));
    if (!/^\d+$/.test(cell(0)) || !Number.isSafeInteger(t)) return this.issue(line, `t_ms "${cell(0).slice(0, 30)}" is not a whole number of ms`);
    // Room for one bin of the contract's widest (60 s) after it: its end must still be a date.
    if (t > MAX_EPOCH_MS - 60_000) return this.issue(line, `t_ms ${t} is past the last representable date`);
    const counts: number[] = [];
    for (const i of this.chanCols) {
      const s = cell(i);
      const v = Number(s);
      if (s === '') return this.issue(line, `${cols[i]}: empty cell`);
      if (!/^\d+$/.test(s) || v > MAX_COUNT) return this.issue(line, `${cols[i]}: "${s.slice(0, 30)}" is not a count (integer 0…2^31−1)`);
      counts.push(v);
    }
    let x = 0;
    if (this.hasX) {
      x = Number(cell(this.xCol));
      if (cell(this.xCol) === '' || !Number.isFinite(x)) return this.issue(line, `x: "${cell(this.xCol).slice(0, 30)}" is not a number`);
    }
    let cc = 0;
    if (this.hasCc) {
      cc = Number(cell(this.ccCol));
      if (!/^\d+$/.test(cell(this.ccCol)) || cc > MAX_COUNT) return this.issue(line, `cc: "${cell(this.ccCol).slice(0, 30)}" is not a count`);
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
      if (step !== this.dt || (this.cur?.x.length ?? 0) >= MAX_BINS) this.flush();
    } else {
      this.firstT = t;
    }
    this.lastT = t;
    this.rows++;
    if (this.failed) return; // keep validating, stop building
    if (!this.cur) this.cur = { t0: t, counts: this.chanCols.map(() => []), x: [], cc: [] };
    counts.forEach((v, k) => this.cur!.counts[k]!.push(v));
    this.cur.x.push(x);
    this.cur.cc.push(cc);
  }

  private flush(): void {
    const c = this.cur;
    this.cur = null;
    if (!c || this.failed || this.dt === null) return;
    const n = c.x.length;
    // Keys sorted, as the ingest stores them, so imported and live rows have the same shape.
    const order = this.channels.map((ch, k) => ({ key: ch.key, k })).sort((a, b) => (a.key < b.key ? -1 : 1));
    this.onBatch({ t0: c.t0, dt: this.dt, n, keys: order.map((o) => o.key), channels: order.map(({ k }) => c.counts[k]!), x: this.hasX ? c.x : null, cc: this.hasCc ? c.cc : null });
  }

  /** Call once after the last record. */
  end(lastLine: number): void {
    if (!this.header) this.issue(lastLine, 'no header row (t_ms,<channel>,…) found');
    else if (this.rows === 0) this.issue(lastLine, 'no data rows');
    else if (this.rows === 1 && !this.failed) this.issue(lastLine, 'one row only: the bin width needs at least two adjacent rows');
    else this.flush();
  }
}
