// Commands from the server (`cmd` topic): validated against the contract, checked against the
// gateway's scan range, executed on the counter's drive and answered with an ack. A command the
// broker delivers twice (QoS 1 redelivery) is answered again but executed once.
import { z } from 'zod';
import { CONTRACT_VERSION, ackSchema, commandBodySchema, decodePayload } from '../src/lib/contract/wire.ts';
import type { Ack, CommandBody } from '../src/lib/contract/wire.ts';
import type { Counter, CounterInfo } from './counter.ts';

const envelopeSchema = z.object({ v: z.literal(CONTRACT_VERSION), id: ackSchema.shape.id });

/** Commands remembered for redelivery; far more than a server has in flight to one gateway. */
const REMEMBERED = 64;

export type CommandOutcome = { ack: Ack } | { ignored: string };

/** Why `cmd` falls outside `scan`, or null when it fits (stop always fits). */
export function outOfScan(cmd: CommandBody, scan: CounterInfo['scan']): string | null {
  if (cmd.op === 'stop') return null;
  if (!scan) return 'this gateway has no scan drive';
  const values: [string, number][] = cmd.op === 'hold' ? [['x', cmd.x]] : [['from', cmd.from], ['to', cmd.to]];
  for (const [name, v] of values) {
    if (v < scan.min || v > scan.max) return `${name} = ${v} ${scan.unit} is outside the scan range ${scan.min}…${scan.max} ${scan.unit}`;
  }
  return null;
}

export class CommandHandler {
  private readonly answered = new Map<string, Ack>();

  constructor(
    private readonly counter: Counter,
    private readonly info: () => CounterInfo,
  ) {}

  handle(payload: Uint8Array): CommandOutcome {
    const envelope = decodePayload(payload, envelopeSchema.passthrough());
    // Without a valid id there is nothing to answer to.
    if (!envelope.ok) return { ignored: `command without a valid v and id: ${envelope.reason}` };
    const { id } = envelope.value;
    const seen = this.answered.get(id);
    if (seen) return { ack: seen };
    const ack = this.execute(id, envelope.value);
    this.answered.set(id, ack);
    if (this.answered.size > REMEMBERED) this.answered.delete(this.answered.keys().next().value!);
    return { ack };
  }

  private execute(id: string, raw: unknown): Ack {
    const body = commandBodySchema.safeParse(raw);
    if (!body.success) {
      const issue = body.error.issues[0];
      return refuse(id, `invalid command: ${issue?.path.join('.') || 'body'}: ${issue?.message ?? 'invalid'}`);
    }
    const cmd = body.data;
    const outside = outOfScan(cmd, this.info().scan);
    if (outside) return refuse(id, outside);
    if (!this.counter.command) return refuse(id, 'this gateway has no scan drive');
    const result = this.counter.command(cmd);
    return result.ok ? { v: CONTRACT_VERSION, id, ok: true } : refuse(id, result.error);
  }
}

function refuse(id: string, error: string): Ack {
  return { v: CONTRACT_VERSION, id, ok: false, error: error.slice(0, 1000) };
}
