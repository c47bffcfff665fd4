// A small worker-thread pool for the fringe fits, so a fit never runs on the event loop that
// stores and pushes counts. Jobs queue in order; each worker runs one at a time.
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import type { FitSweepsInput, FittedSweep } from '../analysis/fit-sweeps.ts';
import type { FringeData, FringeFitOptions, FringeFitResult } from '../analysis/fringe-fit.ts';

export type AnalysisJob =
  | { id: number; kind: 'sweeps'; input: FitSweepsInput }
  | { id: number; kind: 'fringes'; data: FringeData; options: FringeFitOptions };
export type AnalysisReply = { id: number; ok: true; result: FittedSweep[] | FringeFitResult } | { id: number; ok: false; error: string };

type JobBody = { kind: 'sweeps'; input: FitSweepsInput } | { kind: 'fringes'; data: FringeData; options: FringeFitOptions };

interface Pending {
  job: AnalysisJob;
  resolve: (value: FittedSweep[] | FringeFitResult) => void;
  reject: (err: Error) => void;
}

interface Slot {
  worker: Worker;
  busy: Pending | null;
}

// Under tsx (development, tests, the custom server) this file is TypeScript and so is its worker
// entry, which then needs the tsx loader; a bundled build ships both as .js.
const IS_TS = import.meta.url.endsWith('.ts');
const THREAD_URL = new URL(`./analysis-worker.thread.${IS_TS ? 'ts' : 'js'}`, import.meta.url);

/** Start a worker on the entry; a .ts entry goes through the tsx bootstrap beside this file. */
function startWorker(): Worker {
  if (!IS_TS) return new Worker(THREAD_URL);
  return new Worker(new URL('./analysis-worker.boot.mjs', import.meta.url), { workerData: { entry: THREAD_URL.href } });
}

export interface AnalysisPoolOptions {
  /** Worker threads. Default: one per core beyond the first, at most 2 (the ingest loop keeps one). */
  size?: number;
}

export class AnalysisPool {
  readonly #slots: Slot[] = [];
  readonly #queue: Pending[] = [];
  readonly #size: number;
  #nextId = 1;
  #closed = false;

  constructor(options: AnalysisPoolOptions = {}) {
    this.#size = Math.max(1, options.size ?? Math.min(2, availableParallelism() - 1));
  }

  /** Split a scan record into passes and fit each (see fitSweeps). */
  fitSweeps(input: FitSweepsInput): Promise<FittedSweep[]> {
    return this.#submit({ kind: 'sweeps', input }) as Promise<FittedSweep[]>;
  }

  /** Fit one monotonic pass (see fitFringes). */
  fitFringes(data: FringeData, options: FringeFitOptions = {}): Promise<FringeFitResult> {
    return this.#submit({ kind: 'fringes', data, options }) as Promise<FringeFitResult>;
  }

  /** Reject queued jobs and stop the workers. */
  async close(): Promise<void> {
    this.#closed = true;
    for (const p of this.#queue.splice(0)) p.reject(new Error('analysis pool closed'));
    await Promise.all(this.#slots.splice(0).map((s) => {
      s.busy?.reject(new Error('analysis pool closed'));
      return s.worker.terminate();
    }));
  }

  #submit(body: JobBody): Promise<FittedSweep[] | FringeFitResult> {
    if (this.#closed) return Promise.reject(new Error('analysis pool closed'));
    return new Promise((resolve, reject) => {
      this.#queue.push({ job: { ...body, id: this.#nextId++ }, resolve, reject });
      this.#dispatch();
    });
  }

  #dispatch(): void {
    while (this.#queue.length > 0) {
      let slot = this.#slots.find((s) => !s.busy);
      if (!slot && this.#slots.length < this.#size) slot = this.#spawn();
      if (!slot) return;
      const next = this.#queue.shift() as Pending;
      slot.busy = next;
      slot.worker.ref();
      slot.worker.postMessage(next.job);
    }
  }

  #spawn(): Slot {
    const worker = startWorker();
    const slot: Slot = { worker, busy: null };
    worker.on('message', (reply: AnalysisReply) => {
      const done = slot.busy;
      slot.busy = null;
      // An idle worker must not keep the process alive.
      worker.unref();
      if (done && done.job.id === reply.id) {
        if (reply.ok) done.resolve(reply.result);
        else done.reject(new Error(reply.error));
      }
      this.#dispatch();
    });
    const fail = (err: Error): void => {
      const i = this.#slots.indexOf(slot);
      if (i >= 0) this.#slots.splice(i, 1);
      slot.busy?.reject(err);
      slot.busy = null;
      if (!this.#closed) this.#dispatch();
    };
    worker.on('error', fail);
    worker.on('exit', (code) => fail(new Error(`analysis worker exited with code ${code}`)));
    this.#slots.push(slot);
    return slot;
  }
}

let shared: AnalysisPool | null = null;

function pool(): AnalysisPool {
  shared ??= new AnalysisPool();
  return shared;
}

/** Fit a scan record's passes on the shared pool. */
export function fitSweepsAsync(input: FitSweepsInput): Promise<FittedSweep[]> {
  return pool().fitSweeps(input);
}

/** Fit one pass on the shared pool. */
export function fitFringesAsync(data: FringeData, options: FringeFitOptions = {}): Promise<FringeFitResult> {
  return pool().fitFringes(data, options);
}

/** Stop the shared pool (server shutdown, test teardown). */
export async function closeAnalysisPool(): Promise<void> {
  const p = shared;
  shared = null;
  await p?.close();
}
