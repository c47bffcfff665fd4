// The gateway's store-and-forward queue: every batch is written here, durably, before it is sent,
// and leaves only after the broker's PUBACK. A broker outage or a gateway restart therefore loses
// nothing, and a restart resends from the first unacknowledged record, in order.
//
// On disk, in one directory:
//   <first index, 20 digits>.seg  append-only segments, one record per line: `<crc32 hex> <payload>\n`
//   cursor                        index of the first record not yet acknowledged (decimal)
//   lock                          pid of the process using the queue: two writers would interleave lines
// Record indices are implicit: a segment's name is the index of its first line. Only the last
// segment is ever written, so a crash can leave at most a partial last line there; opening the
// queue cuts it off. A line whose checksum fails (a torn or rotted sector) is skipped and counted.
//
// Durability: appends are grouped (all batches waiting while the previous write ran) into one
// write and one fdatasync, so a batch is on disk before anyone can send it. The cursor is written
// at most once per `cursorEveryMs` (write, fsync, rename): a crash resends at most that much that
// was already acknowledged, and the server's dedupe drops it.
//
// Bound: past `maxBytes` the oldest whole segment is dropped, acknowledged or not, and counted.
// Keeping the newest data lets a bench recover from a long outage with its recent history intact;
// the server sees the `seq` gap and reports possible loss on the gateway's health page.
import { mkdir, open, readdir, readFile, rename, stat, truncate, unlink, writeFile } from 'node:fs/promises';
import type { FileHandle } from 'node:fs/promises';
import path from 'node:path';
import { crc32 } from 'node:zlib';

export interface QueueOptions {
  /** Most bytes kept on disk; default 1 GiB (≈ 4 days of a 3-channel bench at 10 ms bins). */
  maxBytes?: number;
  /** A segment is closed past this size; default 8 MiB, at most an eighth of `maxBytes`. */
  segmentBytes?: number;
  /** Longest delay before an acknowledgement reaches the cursor file, ms; default 1000. */
  cursorEveryMs?: number;
  /** Records lost to the size bound or to corruption, with the reason. */
  onLoss?: (records: number, reason: string) => void;
}

export interface QueueRecord {
  index: number;
  payload: string;
}

export interface QueueStats {
  /** First record not yet acknowledged. */
  cursor: number;
  /** Index the next appended record gets. */
  end: number;
  bytes: number;
  segments: number;
  lost: number;
}

interface Segment {
  first: number;
  file: string;
  bytes: number;
}

const SEGMENT_NAME = /^(\d{20})\.seg$/;
const CURSOR = 'cursor';
const LOCK = 'lock';
const NEWLINE = Buffer.from('\n');
/**
 * Read size, bytes: a record is at most 256 KiB of payload plus 10 bytes of framing, so a chunk
 * this large without a newline means the rest of the segment is damaged.
 */
const READ_CHUNK = 1024 * 1024;

export class DiskQueue {
  private readonly acked = new Set<number>();
  private pending: { line: Buffer; resolve: (index: number) => void; reject: (err: Error) => void }[] = [];
  private writeScheduled = false;
  private chain: Promise<unknown> = Promise.resolve();
  private cursorTimer: NodeJS.Timeout | null = null;
  private reader: { seg: Segment; offset: number; index: number } | null = null;
  private lost = 0;
  private closed = false;

  private constructor(
    private readonly dir: string,
    private readonly segments: Segment[],
    private fd: FileHandle,
    private end: number,
    private cursor: number,
    private readonly opts: Required<Omit<QueueOptions, 'onLoss'>> & { onLoss: QueueOptions['onLoss'] | undefined },
  ) {}

  static async open(dir: string, options: QueueOptions = {}): Promise<DiskQueue> {
    const maxBytes = options.maxBytes ?? 1024 ** 3;
    const opts = {
      maxBytes,
      segmentBytes: Math.min(options.segmentBytes ?? 8 * 1024 ** 2, Math.floor(maxBytes / 8)),
      cursorEveryMs: options.cursorEveryMs ?? 1000,
      onLoss: options.onLoss,
    };
    await mkdir(dir, { recursive: true });
    await takeLock(dir);
    const segments: Segment[] = [];
    for (const name of (await readdir(dir)).sort()) {
      const m = SEGMENT_NAME.exec(name);
      if (!m) continue;
      const file = path.join(dir, name);
      segments.push({ first: Number(m[1]), file, bytes: (await stat(file)).size });
    }
    let cursor = await readCursor(dir);
    let end: number;
    const last = segments.at(-1);
    if (last) {
      const data = await readFile(last.file);
      const complete = data.lastIndexOf(0x0a) + 1;
      if (complete < data.length) {
        // A crash in the middle of an append: that record was never acknowledged as written.
        await truncate(last.file, complete);
        last.bytes = complete;
      }
      let lines = 0;
      for (let i = 0; i < complete; i++) if (data[i] === 0x0a) lines++;
      end = last.first + lines;
    } else {
      end = cursor;
      segments.push({ first: end, file: segmentFile(dir, end), bytes: 0 });
    }
    cursor = Math.min(Math.max(cursor, segments[0]!.first), end);
    const fd = await open(segments.at(-1)!.file, 'a');
    if (!last) await syncDir(dir);
    return new DiskQueue(dir, segments, fd, end, cursor, opts);
  }

  /** Appends one payload (a line of JSON, no newline inside); resolves with its index once it is on disk. */
  append(payload: string): Promise<number> {
    if (this.closed) return Promise.reject(new Error('queue is closed'));
    const body = Buffer.from(payload);
    const line = Buffer.concat([Buffer.from(`${crc32(body).toString(16).padStart(8, '0')} `), body, NEWLINE]);
    return new Promise((resolve, reject) => {
      this.pending.push({ line, resolve, reject });
      if (!this.writeScheduled) {
        this.writeScheduled = true;
        void this.exclusive(() => this.writePending());
      }
    });
  }

  /**
   * Up to `max` records from index `from` on (from the cursor, if `from` is below it: those were
   * acknowledged or dropped), in order. Damaged records are skipped, counted and acknowledged here.
   */
  read(from: number, max: number): Promise<QueueRecord[]> {
    return this.exclusive(() => this.readRecords(from, max));
  }

  /** Marks a record as delivered; the cursor advances over every contiguous acknowledged record. */
  ack(index: number): void {
    if (index < this.cursor || index >= this.end) return;
    this.acked.add(index);
    const before = this.cursor;
    while (this.acked.delete(this.cursor)) this.cursor++;
    if (this.cursor !== before && !this.cursorTimer && !this.closed) {
      this.cursorTimer = setTimeout(() => {
        this.cursorTimer = null;
        void this.exclusive(() => this.persistCursor());
      }, this.opts.cursorEveryMs);
    }
  }

  /** The first record still to deliver; where a restarted gateway resumes. */
  get first(): number {
    return this.cursor;
  }

  /** Index the next appended record will get. */
  get next(): number {
    return this.end;
  }

  stats(): QueueStats {
    return {
      cursor: this.cursor,
      end: this.end,
      bytes: this.segments.reduce((sum, s) => sum + s.bytes, 0),
      segments: this.segments.length,
      lost: this.lost,
    };
  }

  /** Waits for pending appends, writes the cursor and closes the file. */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    if (this.cursorTimer) clearTimeout(this.cursorTimer);
    this.cursorTimer = null;
    await this.exclusive(async () => {
      await this.persistCursor();
      await this.fd.close();
      await unlink(path.join(this.dir, LOCK)).catch(() => undefined);
    });
  }

  /** Runs queue I/O one operation at a time, so reads, appends and cleanup never interleave. */
  private exclusive<T>(fn: () => Promise<T>): Promise<T> {
    const run = this.chain.then(fn);
    this.chain = run.catch(() => undefined);
    return run;
  }

  private async writePending(): Promise<void> {
    this.writeScheduled = false;
    const batch = this.pending;
    this.pending = [];
    if (batch.length === 0) return;
    try {
      const bytes = batch.reduce((sum, p) => sum + p.line.length, 0);
      let seg = this.segments.at(-1)!;
      if (seg.bytes > 0 && seg.bytes + bytes > this.opts.segmentBytes) seg = await this.rotate();
      while (this.totalBytes() + bytes > this.opts.maxBytes && this.segments.length > 1) await this.dropOldest();
      const buf = Buffer.concat(batch.map((p) => p.line));
      let written = 0;
      try {
        while (written < buf.length) written += (await this.fd.write(buf, written)).bytesWritten;
        await this.fd.datasync();
      } catch (err) {
        // A short write (disk full) must not leave half a record for the next one to join onto:
        // cut the file back to its last whole record, so line numbers keep matching record numbers.
        if (written > 0) await this.fd.truncate(seg.bytes).catch(() => undefined);
        throw err;
      }
      seg.bytes += buf.length;
      for (const p of batch) p.resolve(this.end++);
    } catch (err) {
      const error = err instanceof Error ? err : new Error(String(err));
      for (const p of batch) p.reject(error);
    }
  }

  private async rotate(): Promise<Segment> {
    await this.fd.close();
    const seg: Segment = { first: this.end, file: segmentFile(this.dir, this.end), bytes: 0 };
    this.fd = await open(seg.file, 'a');
    await syncDir(this.dir);
    this.segments.push(seg);
    return seg;
  }

  private totalBytes(): number {
    return this.segments.reduce((sum, s) => sum + s.bytes, 0);
  }

  private segmentEnd(i: number): number {
    return this.segments[i + 1]?.first ?? this.end;
  }

  private async dropOldest(): Promise<void> {
    const seg = this.segments[0]!;
    const segEnd = this.segmentEnd(0);
    let unacked = 0;
    for (let i = Math.max(this.cursor, seg.first); i < segEnd; i++) if (!this.acked.has(i)) unacked++;
    this.segments.shift();
    if (this.reader?.seg === seg) this.reader = null;
    if (segEnd > this.cursor) {
      for (const i of this.acked) if (i < segEnd) this.acked.delete(i);
      this.cursor = segEnd;
      while (this.acked.delete(this.cursor)) this.cursor++;
    }
    // The cursor moves past the segment on disk before the segment goes.
    await this.persistCursor();
    await unlink(seg.file).catch(() => undefined);
    if (unacked > 0) this.reportLoss(unacked, `queue full (${this.opts.maxBytes} bytes): dropped the oldest segment`);
  }

  private reportLoss(records: number, reason: string): void {
    this.lost += records;
    this.opts.onLoss?.(records, reason);
  }

  private async persistCursor(): Promise<void> {
    const tmp = path.join(this.dir, `${CURSOR}.tmp`);
    await writeFile(tmp, `${this.cursor}\n`, { flush: true });
    await rename(tmp, path.join(this.dir, CURSOR));
    // Whole segments below the cursor are delivered; the last one stays open for appends.
    while (this.segments.length > 1 && this.segments[1]!.first <= this.cursor) {
      const seg = this.segments.shift()!;
      if (this.reader?.seg === seg) this.reader = null;
      await unlink(seg.file).catch(() => undefined);
    }
  }

  private async readRecords(from: number, max: number): Promise<QueueRecord[]> {
    const out: QueueRecord[] = [];
    const index = Math.max(from, this.cursor);
    if (index >= this.end) return out;
    if (this.reader?.index !== index) this.reader = this.locate(index);
    while (out.length < max && this.reader && this.reader.index < this.end) {
      const r = this.reader;
      const i = this.segments.indexOf(r.seg);
      if (r.offset >= r.seg.bytes) {
        const next = this.segments[i + 1];
        this.reader = next ? { seg: next, offset: 0, index: next.first } : null;
        continue;
      }
      const length = Math.min(READ_CHUNK, r.seg.bytes - r.offset);
      const buf = Buffer.allocUnsafe(length);
      const fh = await open(r.seg.file, 'r');
      try {
        await fh.read(buf, 0, length, r.offset);
      } finally {
        await fh.close();
      }
      let start = 0;
      for (let nl = buf.indexOf(0x0a); nl >= 0 && out.length < max; nl = buf.indexOf(0x0a, start)) {
        const record = parseLine(buf.subarray(start, nl));
        if (r.index >= index) {
          if (record === null) {
            this.reportLoss(1, `record ${r.index} failed its checksum`);
            this.ack(r.index);
          } else out.push({ index: r.index, payload: record });
        }
        r.offset += nl + 1 - start;
        r.index++;
        start = nl + 1;
      }
      if (start === 0 && out.length < max) {
        // No newline in a full chunk: the rest of this segment cannot be framed.
        const segEnd = this.segmentEnd(i);
        const skipped = Math.max(0, segEnd - Math.max(r.index, index));
        for (let k = Math.max(r.index, index); k < segEnd; k++) this.ack(k);
        this.reportLoss(skipped, `segment ${path.basename(r.seg.file)} is damaged after byte ${r.offset}`);
        r.offset = r.seg.bytes;
        r.index = segEnd;
      }
    }
    return out;
  }

  /** A reader positioned on the line of record `index` (scanning its segment from the start). */
  private locate(index: number): { seg: Segment; offset: number; index: number } | null {
    for (let i = this.segments.length - 1; i >= 0; i--) {
      const seg = this.segments[i]!;
      if (seg.first <= index) return { seg, offset: 0, index: seg.first };
    }
    return null;
  }
}

function segmentFile(dir: string, first: number): string {
  return path.join(dir, `${String(first).padStart(20, '0')}.seg`);
}

/** The payload of a framed line, or null when the frame or its checksum is wrong. */
function parseLine(line: Buffer): string | null {
  if (line.length < 10 || line[8] !== 0x20) return null;
  const body = line.subarray(9);
  const crc = Number.parseInt(line.subarray(0, 8).toString('latin1'), 16);
  return crc === crc32(body) ? body.toString('utf8') : null;
}

async function readCursor(dir: string): Promise<number> {
  try {
    const text = (await readFile(path.join(dir, CURSOR), 'utf8')).trim();
    return /^\d{1,15}$/.test(text) ? Number(text) : 0;
  } catch {
    return 0;
  }
}

/** Claims the queue for this process; a lock left by a process that is gone is taken over. */
async function takeLock(dir: string): Promise<void> {
  const file = path.join(dir, LOCK);
  for (let attempt = 0; ; attempt++) {
    try {
      await writeFile(file, `${process.pid}\n`, { flag: 'wx' });
      return;
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST' || attempt > 0) throw err;
    }
    const pid = Number((await readFile(file, 'utf8').catch(() => '')).trim());
    if (Number.isInteger(pid) && pid > 0 && isAlive(pid)) throw new Error(`queue ${dir} is in use by process ${pid}`);
    await unlink(file).catch(() => undefined);
  }
}

function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    // EPERM: the process exists but belongs to someone else.
    return (err as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/** Makes a new or renamed entry in `dir` durable. */
async function syncDir(dir: string): Promise<void> {
  const fh = await open(dir, 'r');
  try {
    await fh.sync();
  } finally {
    await fh.close();
  }
}
