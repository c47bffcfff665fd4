// runtime().commands: publishes commands on a gateway's cmd topic and matches the acks that come
// back on its ack topic (they reach the bench's live clients through the fan-out as well).
import { and, eq, sql } from 'drizzle-orm';
import type { Ack, Command } from '../../contract/wire.ts';
import { topicFor } from '../../contract/wire.ts';
import { recordAudit } from '../audit.ts';
import { getDb } from '../db/index.ts';
import { auditLog } from '../db/schema.ts';
import type { Fanout } from '../ingest/fanout.ts';
import type { MqttTransport } from '../mqtt/transport.ts';
import type { CommandSender } from '../runtime.ts';

/** How long `send` waits for an ack by default (ms). */
const ACK_TIMEOUT_MS = 10_000;

/** Commands remembered in memory for matching acks; older ones are looked up in the audit trail. */
const REMEMBERED_COMMANDS = 10_000;

export class BrokerCommandSender implements CommandSender {
  private pending = new Map<string, { gatewayId: string; resolve: (a: Ack) => void }>();
  /** Command id → the gateway it went to, newest last. */
  private sent = new Map<string, string>();
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
    // Remembered before it leaves: a quick gateway's ack can arrive before the publish resolves.
    this.sent.set(command.id, gatewayId);
    if (this.sent.size > REMEMBERED_COMMANDS) this.sent.delete(this.sent.keys().next().value!);
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

  /**
   * Whether command `id` was sent to `gatewayId`: an ack for anything else is refused, so a gateway
   * can neither write the audit trail nor show the bench's clients results of commands never given.
   * Commands sent before a restart are found by their audit entry.
   */
  async sentTo(gatewayId: string, id: string): Promise<boolean> {
    const remembered = this.sent.get(id);
    if (remembered !== undefined) return remembered === gatewayId;
    const rows = await getDb()
      .select({ id: auditLog.id })
      .from(auditLog)
      .where(and(eq(auditLog.entity, 'command'), eq(auditLog.entityId, id), eq(auditLog.action, 'send'), sql`${auditLog.after}->>'gateway' = ${gatewayId}`))
      .limit(1);
    return rows.length > 0;
  }

  close(): void {
    this.unsubscribe();
  }
}
