// In-process bus between server stages: ingest announces what it stored, the admin pages what they
// changed, and the fitter and the alarm evaluator listen (the WebSocket hub has its own fan-out, ingest/fanout.ts). On globalThis
// so both module copies share one bus.
import { EventEmitter } from 'node:events';
import type { CountBatch, GatewayStatus } from '../contract/wire.ts';

export interface ServerEvents {
  /** A batch was durably stored (duplicates are not announced). */
  'batch-stored': [{ benchId: string; gatewayId: string; batch: CountBatch; receivedAt: number }];
  /** A batch was rejected (counted on the gateway's health page). */
  'batch-rejected': [{ benchId: string | null; gatewayId: string; reason: string; at: number }];
  'gateway-status': [{ benchId: string; gatewayId: string; status: GatewayStatus; at: number }];
  /** A sweep was fitted and stored (table `sweeps`). */
  'sweep-fitted': [{ benchId: string; sweep: FittedSweepSummary }];
  /** An admin changed a bench's settings or a channel's (committed): cached copies are stale. */
  'bench-settings-changed': [{ benchId: string }];
  /** The phase estimate at hold was updated (rad, rad/s). */
  'phase-update': [{ benchId: string; at: number; phase: number; driftRadPerS: number | null }];
}

export interface FittedSweepSummary {
  id: number;
  startMs: number;
  endMs: number;
  direction: 'up' | 'down';
  visibility: number;
  visibilityErr: number;
  visibilityNet: number | null;
  visibilityNetErr: number | null;
  phase: number;
  periodX: number;
  counts: number;
}

const KEY = Symbol.for('fringewise.events');
type Holder = { [KEY]?: EventEmitter<ServerEvents> };

export function serverEvents(): EventEmitter<ServerEvents> {
  const holder = globalThis as Holder;
  if (!holder[KEY]) {
    holder[KEY] = new EventEmitter<ServerEvents>();
    // Listeners are a handful of stages, plus one per test app; not a leak.
    holder[KEY].setMaxListeners(50);
  }
  return holder[KEY];
}
