// `--driver replay`: a CSV in the server's export format played back as if a counter produced it,
// at a chosen speed. Streams the file, so an hour of 1 ms bins needs no more memory than a minute.
import { createReadStream } from 'node:fs';
import { setTimeout as sleep } from 'node:timers/promises';
import { parse } from 'csv-parse';
import { BinAccumulator } from '../counter.ts';
import type { Counter, CounterInfo, CounterSink } from '../counter.ts';
import { ReplayParser, replayColumns } from './replay-csv.ts';
import type { ReplayColumns } from './replay-csv.ts';

export interface ReplayDriverOptions {
  file: string;
  /** Playback speed: 1 is real time, 10 ten times faster, 0 as fast as the queue takes it. */
  speed?: number;
  /**
   * `now` (default) shifts the recording so its first bin starts now, keeping its spacing (above
   * speed 1 the stamps run ahead of the clock); `original` keeps the recorded times, to import a
   * file under a gateway that has no data for that time.
   */
  time?: 'now' | 'original';
  /** Which gateway's columns to replay when the file holds several. */
  source?: string;
  /** Bin width, ms, when the file has a single row. */
  dt?: number;
  /** Bin time per batch, ms. */
  batchMs?: number;
  now?: () => number;
}

export class ReplayCounter implements Counter {
  private readonly abort = new AbortController();
  private done: Promise<void> = Promise.resolve();
  private records: AsyncIterator<{ record: string[]; info: { lines: number } }> | null = null;
  private cols: ReplayColumns | null = null;

  constructor(private readonly opts: ReplayDriverOptions) {}

  async start(sink: CounterSink): Promise<CounterInfo> {
    const parser = createReadStream(this.opts.file).pipe(
      parse({ comment: '#', comment_no_infix: true, skip_empty_lines: true, relax_column_count: true, trim: true, info: true }),
    );
    this.records = parser[Symbol.asyncIterator]() as AsyncIterator<{ record: string[]; info: { lines: number } }>;
    const header = await this.records.next();
    if (header.done) throw new Error(`${this.opts.file} has no header row`);
    this.cols = replayColumns(header.value.record, this.opts.source);
    this.done = this.play(sink).then(
      () => sink.end(),
      (err: unknown) => sink.end(err instanceof Error ? err : new Error(String(err))),
    );
    return { channels: [...this.cols.keys] };
  }

  async stop(): Promise<void> {
    this.abort.abort();
    await this.done;
  }

  private async play(sink: CounterSink): Promise<void> {
    const cols = this.cols!;
    const records = this.records!;
    const now = this.opts.now ?? Date.now;
    const speed = this.opts.speed ?? 1;
    const parser = new ReplayParser(cols, this.opts.dt);
    let stored: Promise<void> = Promise.resolve();
    const batchMs = this.opts.batchMs ?? 100;
    const acc = new BinAccumulator((bins) => (stored = sink.bins(bins)), batchMs);
    let shift: number | null = null;
    let startWall = 0;
    let first = 0;
    for (;;) {
      const next = this.abort.signal.aborted ? null : await records.next();
      const row = next && !next.done ? parser.row(next.value.record) : parser.end();
      if (row.kind === 'error') sink.warn(`${this.opts.file}${next && !next.done ? ` line ${next.value.info.lines}` : ''}: ${row.reason}`);
      else {
        for (const bin of row.bins) {
          const dt = parser.dt!;
          if (shift === null) {
            startWall = now();
            first = bin.t;
            shift = this.opts.time === 'original' ? 0 : Math.floor(startWall / dt) * dt - bin.t;
          }
          if (speed > 0) {
            // A bin is played once it has fully elapsed at the chosen speed.
            const due = startWall + (bin.t + dt - first) / speed;
            const wait = due - now();
            if (wait > 0) {
              // A gap in the recording: send what is held rather than sit on it.
              if (wait > batchMs) acc.flush();
              const woke = await sleep(wait, true, { signal: this.abort.signal }).catch(() => false);
              if (!woke) break;
            }
          }
          acc.push(bin.t + shift, dt, cols.keys, bin.counts, bin.x, bin.cc);
          await stored;
        }
      }
      if (!next || next.done) break;
    }
    acc.flush();
    await stored;
  }
}
