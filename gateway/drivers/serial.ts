// `--driver serial`: a microcontroller counter speaking the line protocol of serial-protocol.ts,
// read from a device path (a tty set up beforehand with `stty`, a FIFO) or any readable stream.
// No native serial-port module: the operating system's tty driver does the UART work.
import { closeSync, constants, createReadStream, openSync } from 'node:fs';
import type { Readable } from 'node:stream';
import tty from 'node:tty';
import { BinAccumulator } from '../counter.ts';
import type { Counter, CounterInfo, CounterSink } from '../counter.ts';
import { DeviceClock, LineSplitter, parseSerialLine } from './serial-protocol.ts';
import type { SerialHeader } from './serial-protocol.ts';

export interface SerialDriverOptions {
  /** Device path, e.g. /dev/ttyACM0; reopened after it closes (a USB counter being reset). */
  device?: string;
  /** Or an open stream (tests, a pipe); the driver ends with it. */
  stream?: Readable;
  /** Bin time per batch, ms; also how long a half-full batch waits for more lines. */
  batchMs?: number;
  /** Device clock drift tolerated before re-anchoring, ms. */
  maxSkewMs?: number;
  /** Wait before reopening a closed device, ms: 2 s lets a USB device re-enumerate. */
  reopenMs?: number;
  /** Shortest interval between two warnings about bad lines, ms: a wrong baud rate makes every line bad. */
  warnEveryMs?: number;
  now?: () => number;
}

export class SerialCounter implements Counter {
  private readonly now: () => number;
  private readonly clock: DeviceClock;
  private sink: CounterSink | null = null;
  private acc: BinAccumulator | null = null;
  private header: SerialHeader | null = null;
  private stream: Readable | null = null;
  private flushTimer: NodeJS.Timeout | null = null;
  private reopenTimer: NodeJS.Timeout | null = null;
  private lastLineAt = 0;
  private badLines = 0;
  private lastWarnAt = -Infinity;
  private lastAheadWarnAt = -Infinity;
  private stopped = false;
  private ready: ((info: CounterInfo) => void) | null = null;
  private failed: ((err: Error) => void) | null = null;

  constructor(private readonly opts: SerialDriverOptions) {
    if (!opts.device === !opts.stream) throw new Error('serial driver needs exactly one of device or stream');
    this.now = opts.now ?? Date.now;
    this.clock = new DeviceClock(opts.maxSkewMs);
  }

  start(sink: CounterSink): Promise<CounterInfo> {
    this.sink = sink;
    const batchMs = this.opts.batchMs ?? 100;
    this.acc = new BinAccumulator((bins) => void sink.bins(bins), batchMs);
    this.flushTimer = setInterval(() => {
      if (this.now() - this.lastLineAt >= batchMs) this.acc?.flush();
    }, batchMs);
    return new Promise<CounterInfo>((resolve, reject) => {
      this.ready = resolve;
      this.failed = reject;
      this.attach();
    });
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.flushTimer) clearInterval(this.flushTimer);
    if (this.reopenTimer) clearTimeout(this.reopenTimer);
    this.acc?.flush();
    this.stream?.destroy();
    this.stream = null;
    this.failed?.(new Error('stopped before the counter sent its HELLO line'));
    this.sink = null;
  }

  private attach(): void {
    let stream: Readable;
    try {
      stream = this.opts.stream ?? openDevice(this.opts.device!);
    } catch (err) {
      this.closed(err instanceof Error ? err : new Error(String(err)));
      return;
    }
    this.stream = stream;
    stream.setEncoding('utf8');
    const splitter = new LineSplitter(
      (line) => this.line(line),
      () => this.bad(`line longer than the protocol allows`),
    );
    stream.on('data', (chunk: string) => splitter.push(chunk));
    // A pty or USB tty whose other end went away reports EIO; both end the same way.
    stream.once('error', (err) => this.closed(err));
    stream.once('end', () => this.closed());
  }

  private closed(err?: Error): void {
    if (this.stopped || !this.sink) return;
    this.stream?.destroy();
    this.stream = null;
    this.acc?.flush();
    if (this.opts.device) {
      this.sink.warn(`${this.opts.device} closed${err ? ` (${err.message})` : ''}; reopening`);
      this.reopenTimer = setTimeout(() => this.attach(), this.opts.reopenMs ?? 2000);
      return;
    }
    if (this.failed) this.failed(err ?? new Error('stream ended before the counter sent its HELLO line'));
    else this.sink.end(err);
  }

  private line(text: string): void {
    const sink = this.sink;
    if (!sink) return;
    this.lastLineAt = this.now();
    const parsed = parseSerialLine(text, this.header);
    switch (parsed.kind) {
      case 'skip':
        return;
      case 'error':
        return this.bad(parsed.reason);
      case 'header': {
        const h = parsed.header;
        const before = this.header;
        this.header = h;
        const info: CounterInfo = { channels: [...h.keys] };
        if (this.ready) {
          this.ready(info);
          this.ready = null;
          this.failed = null;
        } else if (!before || before.keys.join() !== h.keys.join()) sink.info(info);
        return;
      }
      case 'bin': {
        const h = this.header!;
        const { bin } = parsed;
        const mapped = this.clock.map(bin.t, h.dt, this.lastLineAt);
        if (!mapped) return this.bad(`device time ${bin.t} repeats a bin already sent`);
        if (mapped.event === 'reanchored') sink.warn(`device clock re-anchored at device time ${bin.t} ms`);
        if (mapped.event === 'ahead') this.ahead(mapped.t0 + h.dt - this.lastLineAt);
        this.acc!.push(mapped.t0, h.dt, h.keys, bin.counts, bin.x, bin.cc);
      }
    }
  }

  /**
   * A bin whose device time maps past the gateway's clock is kept (pulling it back would reuse bin
   * times), so this is no bad line: it says how far ahead, at most every `warnEveryMs`.
   */
  private ahead(byMs: number): void {
    const now = this.now();
    if (now - this.lastAheadWarnAt < (this.opts.warnEveryMs ?? 5000)) return;
    this.lastAheadWarnAt = now;
    this.sink?.warn(`device clock runs ${Math.round(byMs)} ms ahead of this gateway's clock: its bins are stored that far in the future (a fast clock, or lines the counter held back until the port was opened)`);
  }

  /** Counts a bad line; warns at most every `warnEveryMs` with how many there were since. */
  private bad(reason: string): void {
    this.badLines++;
    const now = this.now();
    if (now - this.lastWarnAt < (this.opts.warnEveryMs ?? 5000)) return;
    this.lastWarnAt = now;
    this.sink?.warn(`bad serial line (${this.badLines} so far): ${reason}`);
  }
}

/** A tty is read through libuv's tty handle (non-blocking); anything else as a plain file or FIFO. */
function openDevice(device: string): Readable {
  const fd = openSync(device, constants.O_RDONLY | constants.O_NOCTTY | constants.O_NONBLOCK);
  if (tty.isatty(fd)) return new tty.ReadStream(fd);
  closeSync(fd);
  return createReadStream(device);
}
