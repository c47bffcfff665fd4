// `--driver sim`: the interferometer simulator as a counter, paced in real time. Every `batchMs`
// it draws the bins that have fully elapsed on the wall clock, so bin times are true times and
// sweep commands act at the moment they arrive.
import type { CommandBody } from '../../src/lib/contract/wire.ts';
import type { DemoBench } from '../../simulators/demo-benches.ts';
import { createDemoSimulator } from '../../simulators/demo-benches.ts';
import type { InterferometerSim } from '../../simulators/interferometer.ts';
import { MAX_BATCH_BINS } from '../counter.ts';
import type { CommandResult, Counter, CounterInfo, CounterSink } from '../counter.ts';

/** Bin width, ms: 10 ms resolves sweeps with 20 ms dwell and keeps a demo's database small. */
export const SIM_DT_MS = 10;
/** How often a batch is drawn, ms: 100 ms puts 10 bins of 10 ms in each message. */
export const SIM_BATCH_MS = 100;

export interface SimDriverOptions {
  bench: DemoBench;
  /** The simulator's seed; the bench's own by default, so the demo looks the same on every start. */
  seed?: number;
  /** Bin width, ms; SIM_DT_MS by default. */
  dtMs?: number;
  /** How often a batch is drawn, ms; SIM_BATCH_MS by default. */
  batchMs?: number;
  /** Wall clock, ms since the epoch (tests pass their own). */
  now?: () => number;
}

/**
 * Longest stall made up for, ms: after a longer pause (a suspended laptop) the counter skips ahead
 * and leaves a gap rather than inventing minutes of counts in one burst.
 */
const MAX_CATCH_UP_MS = 60_000;

export class SimCounter implements Counter {
  private readonly sim: InterferometerSim;
  private readonly dt: number;
  private readonly batchMs: number;
  private readonly now: () => number;
  private timer: NodeJS.Timeout | null = null;
  private sink: CounterSink | null = null;
  /** Start of the next bin to draw, ms since the epoch. */
  private t = 0;

  constructor(private readonly opts: SimDriverOptions) {
    this.sim = createDemoSimulator(opts.bench, opts.seed);
    this.dt = opts.dtMs ?? SIM_DT_MS;
    this.batchMs = opts.batchMs ?? SIM_BATCH_MS;
    this.now = opts.now ?? Date.now;
  }

  start(sink: CounterSink): Promise<CounterInfo> {
    this.sink = sink;
    this.t = this.gridNow();
    this.timer = setInterval(() => this.tick(), this.batchMs);
    return Promise.resolve({ channels: [...this.sim.channels], scan: { ...this.opts.bench.scan } });
  }

  command(cmd: CommandBody): CommandResult {
    // Bring the simulation up to now first, so the command acts at the time it arrived.
    this.tick();
    return this.sim.command(cmd);
  }

  stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    this.tick();
    this.sink = null;
    return Promise.resolve();
  }

  private gridNow(): number {
    return Math.floor(this.now() / this.dt) * this.dt;
  }

  private tick(): void {
    const sink = this.sink;
    if (!sink) return;
    const end = this.gridNow();
    if (end - this.t > MAX_CATCH_UP_MS) {
      sink.warn(`clock jumped ${Math.round((end - this.t) / 1000)} s ahead: skipping to now`);
      this.t = end;
    }
    // A clock stepped back leaves end < t: wait until the wall clock passes t again.
    while (end > this.t) {
      const n = Math.min((end - this.t) / this.dt, MAX_BATCH_BINS);
      const drawn = this.sim.next(n, this.dt);
      const t0 = this.t;
      this.t += n * this.dt;
      void sink.bins(drawn.cc ? { t0, dt: this.dt, ch: drawn.ch, x: drawn.x, cc: drawn.cc } : { t0, dt: this.dt, ch: drawn.ch, x: drawn.x });
    }
  }
}
