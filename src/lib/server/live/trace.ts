// Benchmark-only timestamps of count batches on their way through the live path (queued for the
// writer, write started, committed, frame started and written to the bench's clients), published on
// a diagnostics channel that tests/bench/ingest.bench.ts subscribes to. With no subscriber a hook
// costs one property read and builds nothing, so the hooks stay in the hot path.
import diagnostics_channel from 'node:diagnostics_channel';

export type LiveStage = 'queued' | 'write-start' | 'committed' | 'frame-start' | 'frame-end';

export interface LiveTraceEvent {
  stage: LiveStage;
  /** High-resolution wall clock, ms since the epoch: comparable with the load generator's process. */
  at: number;
  /** The batches this event is about, as `gateway/t0`. */
  keys: string[];
}

export const LIVE_TRACE_CHANNEL = 'fringewise.live-trace';
const channel = diagnostics_channel.channel(LIVE_TRACE_CHANNEL);

/** Publishes a stage when someone listens; `keys` runs only then. */
export function traceStage(stage: LiveStage, keys: () => string[]): void {
  if (!channel.hasSubscribers) return;
  channel.publish({ stage, at: performance.timeOrigin + performance.now(), keys: keys() } satisfies LiveTraceEvent);
}
