// runtime().commands: publishes commands on a gateway's cmd topic and matches the acks that come
// back on its ack topic (they reach the bench's live clients through the fan-out as well).
import type { Ack, Command } from '../../contract/wire.ts';
import { topicFor } from '../../contract/wire.ts';
import { recordAudit } from '../audit.ts';
import type { Fanout } from '../ingest/fanout.ts';
import type { MqttTransport } from '../mqtt/transport.ts';
import type { CommandSender } from '../runtime.ts';

/** How long `send` waits for an ack by default (ms). */
const ACK_TIMEOUT_MS = 10_000;

export class BrokerCommandSender implements CommandSender {
  private pending = new Map<string, { gatewayId: string; resolve: (a: Ack) => void }>();
  private readonly unsubscribe: () => void;

  constructor(
    private readonly transport: MqttTransport,
    fanout: Fanout,
    private readonly prefix: string,
  ) {
    this.unsubscribe = fanout.subscribe((_bench, m) => {
      if (m.type !== 'ack') return;
      const ack = m as { gateway: string; id: string; ok: boolean; error?: string };
      void recordAudit({ actorId: null, entity: 'command', entityId: ack.id, action: ack.ok ? 'ack' : 'refused', after: { gateway: ack.gateway, ok: ack.ok, error: ack.error } }).catch(
        (err: unknown) => console.warn('[commands] could not record an ack:', err instanceof Error ? err.message : err),
      );
      const p = this.pending.get(ack.id);
      if (!p || p.gatewayId !== ack.gateway) return;
      this.pending.delete(ack.id);
      p.resolve({ v: 1, id: ack.id, ok: ack.ok, ...(ack.error !== undefined && { error: ack.error }) });
    });
  }

  async publish(gatewayId: string, command: Command): Promise<void> {
    await this.transport.publish(topicFor(gatewayId, 'cmd', this.prefix), JSON.stringify(command));
  }

  async send(gatewayId: string, command: Command, timeoutMs = ACK_TIMEOUT_MS): Promise<Ack> {
    const acked = new Promise<Ack>((resolve, reject) => {
      const timer = setTimeout(() => {
        this.pending.delete(command.id);
        reject(new Error(`no ack from ${gatewayId} within ${timeoutMs} ms`));
      }, timeoutMs);
      this.pending.set(command.id, {
        gatewayId,
        resolve: (a) => {
          clearTimeout(timer);
          resolve(a);
        },
      });
    });
    try {
      await this.publish(gatewayId, command);
    } catch (err) {
      this.pending.delete(command.id);
      throw err;
    }
    return await acked;
  }

  close(): void {
    this.unsubscribe();
  }
}
