// The ingest pipeline, transport-agnostic: both broker modes hand it (gateway, kind, payload) and
// acknowledge the MQTT message when `handle` resolves. decode → store → fan-out.
import type { CountBatch } from '../../contract/wire.ts';
import type { CountsMessage } from '../../live-messages.ts';
import { serverEvents } from '../events.ts';
import { isLate } from '../live/frame-period.ts';
import type { Slice } from './coverage.ts';
import { decodeInbound, type InboundKind } from './decode.ts';
import { Fanout } from './fanout.ts';
import { GatewayDirectory } from './gateway-directory.ts';
import { SilenceWatch, type SilenceOptions } from './silence-watch.ts';
import { storeStatus } from './status-store.ts';
import { BatchWriter, type StoredEvent } from './store.ts';

export function countsMessage(benchId: string, gatewayId: string, s: Slice): CountsMessage {
  // Object.fromEntries defines own properties: `ch[k] = …` would set the prototype for a channel "__proto__".
  const ch: Record<string, number[]> = Object.fromEntries(s.keys.map((k, i) => [k, s.channels[i]!]));
  const msg: CountsMessage = { type: 'counts', bench: benchId, gateway: gatewayId, t0: s.t0, dt: s.dt, ch };
  if (s.x) msg.x = s.x;
  if (s.cc) msg.cc = s.cc;
  return msg;
}

/** The time a batch's bins cover, n·dt, ms. */
function batchSpanMs(b: CountBatch): number {
  return (Object.values(b.ch)[0]?.length ?? 0) * b.dt;
}

export class Ingest {
  readonly fanout = new Fanout();
  readonly directory = new GatewayDirectory();
  // One writer: a second one (gateways split by hash) measured worse on 2 cores once in-order
  // batches skipped the span read (DEVELOPERS.md, "Ingest benchmark").
  readonly writer = new BatchWriter((e) => this.onStored(e));
  /** Gateways whose status says online but which have sent nothing for too long (silence.ts). */
  readonly silence: SilenceWatch;
  /** Whether an ack's command was sent to its gateway; set once the command sender exists. */
  knownCommand: (gatewayId: string, id: string) => Promise<boolean> = () => Promise.resolve(false);

  constructor(opts: { silence?: SilenceOptions } = {}) {
    this.silence = new SilenceWatch(this.fanout, opts.silence);
  }

  /**
   * Handles one message a gateway published on its own topic. Resolves when the message may be
   * acknowledged: stored durably, recognised as a duplicate, or counted as rejected. Never rejects,
   * so a bad payload can neither crash the server nor be redelivered forever.
   */
  async handle(gatewayId: string, kind: InboundKind, payload: Uint8Array, arrivedAt = Date.now()): Promise<void> {
    try {
      const benchId = await this.directory.benchOf(gatewayId);
      if (!benchId) {
        // Only reachable with an external broker whose ACL lets an unknown gateway id publish.
        console.warn(`[ingest] ignored ${kind} from unknown gateway ${gatewayId}`);
        return;
      }
      const decoded = decodeInbound(kind, payload);
      if (!decoded.ok) {
        // Heard, whatever it said.
        this.silence.heard(gatewayId, benchId, arrivedAt);
        await this.writer.reject(gatewayId, `${kind}: ${decoded.reason}`);
        serverEvents().emit('batch-rejected', { benchId, gatewayId, reason: decoded.reason, at: arrivedAt });
        return;
      }
      const msg = decoded.value;
      if (msg.kind === 'counts') {
        this.silence.heard(gatewayId, benchId, arrivedAt, batchSpanMs(msg.value));
        const outcome = await this.writer.submit(gatewayId, msg.value, arrivedAt);
        if (outcome.kind === 'rejected') {
          console.warn(`[ingest] ${gatewayId}: batch rejected: ${outcome.reason}`);
          serverEvents().emit('batch-rejected', { benchId, gatewayId, reason: outcome.reason, at: arrivedAt });
        }
      } else if (msg.kind === 'status') {
        await storeStatus(gatewayId, msg.value);
        this.silence.status(gatewayId, benchId, msg.value.state === 'online', arrivedAt);
        serverEvents().emit('gateway-status', { benchId, gatewayId, status: msg.value, at: arrivedAt });
        const { state, channels, scan, software } = msg.value;
        this.fanout.emit(benchId, { type: 'status', bench: benchId, gateway: gatewayId, state, at: arrivedAt, ...(channels && { channels }), ...(scan && { scan }), ...(software && { software }) });
      } else {
        this.silence.heard(gatewayId, benchId, arrivedAt);
        const { id, ok, error } = msg.value;
        if (!(await this.knownCommand(gatewayId, id))) {
          const reason = `ack: no command ${JSON.stringify(id.slice(0, 40))} was sent to this gateway`;
          await this.writer.reject(gatewayId, reason);
          serverEvents().emit('batch-rejected', { benchId, gatewayId, reason, at: arrivedAt });
          return;
        }
        this.fanout.emit(benchId, { type: 'ack', bench: benchId, gateway: gatewayId, id, ok, ...(error !== undefined && { error }) });
      }
    } catch (err) {
      // A bug or a non-transient database error: log it and acknowledge, so the server keeps running.
      console.error(`[ingest] ${gatewayId} ${kind}:`, err);
    }
  }

  private onStored(e: StoredEvent): void {
    const benchId = this.directory.cached(e.gatewayId);
    if (!benchId) return;
    const receivedAt = Date.now();
    const late = isLate(e.arrivedAt, receivedAt);
    for (const s of e.slices) {
      const msg = countsMessage(benchId, e.gatewayId, s);
      this.fanout.emit(benchId, msg, late);
      // Fits and alarms listen on the server bus; boot/seq are the ingest's business, not theirs.
      const batch = { v: 1 as const, boot: '', seq: 0, t0: s.t0, dt: s.dt, ch: msg.ch, ...(msg.x && { x: msg.x }), ...(msg.cc && { cc: msg.cc }) };
      serverEvents().emit('batch-stored', { benchId, gatewayId: e.gatewayId, batch, receivedAt });
    }
  }
}
