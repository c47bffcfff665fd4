// The in-process fan-out: stored batches, gateway status and command acks go to every subscriber
// (the WebSocket hub, and later fits and alarms) without any of them knowing the others.
import type { FeatureMessage, LiveMessage } from '../../live-messages.ts';

/** `late`: the message is a batch that already waited a frame period or more since it arrived. */
export type FanoutListener = (benchId: string, message: LiveMessage | FeatureMessage, late: boolean) => void;

export class Fanout {
  private listeners = new Set<FanoutListener>();

  subscribe(listener: FanoutListener): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  emit(benchId: string, message: LiveMessage | FeatureMessage, late = false): void {
    for (const l of this.listeners) {
      try {
        l(benchId, message, late);
      } catch (err) {
        console.error('[fanout] listener failed:', err);
      }
    }
  }
}
