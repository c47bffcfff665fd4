// The gateways' answers to drive commands, as the bench's live socket relays them (`ack`). The
// server's 202 only says a command was published; a gateway may still refuse it (no drive, outside
// its reach), and the operator must hear that rather than "sent".
import { ackMessageSchema } from '../live-messages.ts';
import { liveSocket } from './live-socket.ts';

/** A gateway's verdict on one command. */
export interface GatewayAnswer {
  ok: boolean;
  error?: string;
}

export interface AnswerListener {
  /** The answer to command `id`, or null when none came within `timeoutMs`. */
  answer(id: string, timeoutMs: number): Promise<GatewayAnswer | null>;
  close(): void;
}

/** Starts listening before a command is posted, so an answer that beats the 202 is not missed. */
export type AnswerSource = () => AnswerListener;

export function liveAnswers(bench: string): AnswerSource {
  return () => {
    const seen = new Map<string, GatewayAnswer>();
    const waiting = new Map<string, (a: GatewayAnswer) => void>();
    const off = liveSocket(bench).subscribe((m) => {
      if (m.type !== 'ack') return;
      const ack = ackMessageSchema.safeParse(m);
      if (!ack.success) return;
      const a: GatewayAnswer = ack.data.error === undefined ? { ok: ack.data.ok } : { ok: ack.data.ok, error: ack.data.error };
      const resolve = waiting.get(ack.data.id);
      if (resolve) resolve(a);
      else seen.set(ack.data.id, a);
    });
    return {
      answer(id, timeoutMs) {
        const early = seen.get(id);
        if (early) return Promise.resolve(early);
        return new Promise((resolve) => {
          const timer = setTimeout(() => {
            waiting.delete(id);
            resolve(null);
          }, timeoutMs);
          waiting.set(id, (a) => {
            clearTimeout(timer);
            waiting.delete(id);
            resolve(a);
          });
        });
      },
      close: off,
    };
  };
}
