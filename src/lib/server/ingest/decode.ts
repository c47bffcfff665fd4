// The decode stage: raw MQTT payload → validated contract object, per topic kind. Pure; every rule
// lives in the contract module (wire.ts), this only picks the schema. Count batches in their plain
// form take the byte scan first (count-batch-scan.ts); the schema decodes the rest and gives reasons.
import { scanCountBatch } from '../../contract/count-batch-scan.ts';
import { ackSchema, countBatchSchema, decodePayload, statusSchema, type Ack, type CountBatch, type Decoded, type GatewayStatus } from '../../contract/wire.ts';

export type InboundKind = 'counts' | 'status' | 'ack';

export type Inbound = { kind: 'counts'; value: CountBatch } | { kind: 'status'; value: GatewayStatus } | { kind: 'ack'; value: Ack };

export function decodeInbound(kind: InboundKind, payload: Uint8Array): Decoded<Inbound> {
  switch (kind) {
    case 'counts': {
      const plain = scanCountBatch(payload);
      if (plain) return { ok: true, value: { kind, value: plain } };
      const d = decodePayload(payload, countBatchSchema);
      return d.ok ? { ok: true, value: { kind, value: d.value } } : d;
    }
    case 'status': {
      const d = decodePayload(payload, statusSchema);
      return d.ok ? { ok: true, value: { kind, value: d.value } } : d;
    }
    case 'ack': {
      const d = decodePayload(payload, ackSchema);
      return d.ok ? { ok: true, value: { kind, value: d.value } } : d;
    }
  }
}
