// The in-process fan-out: stored batches, gateway status and command acks go to every subscriber
// (the WebSocket hub, and later fits and alarms) without any of them knowing the others.
import type { FeatureMessage, LiveMessage } from '../../live-messages.ts';

export type FanoutListener = (benchId: string, message: LiveMessage | FeatureMessage) => void;

export class Fanout {
  private listeners = new Set<FanoutListener>();

  subscribe(listener: FanoutListener): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  emit(benchId: string, message: LiveMessage | FeatureMessage): void {
    for (const l of this.listeners) {
      try {
        l(benchId, message);
      } catch (err) {
        console.error('[fanout] listener failed:', err);
      }
    }
  }
}
