// What a gateway may do on the broker (contract, "Transport"): publish only its own counts, status
// and ack; subscribe only to its own cmd. Pure, so both broker modes and the tests share one rule.
import { DEFAULT_PREFIX, parseTopic, topicFor } from '../../contract/wire.ts';

export type PublishVerdict = { ok: true; kind: 'counts' | 'status' | 'ack' } | { ok: false; reason: string };

export function gatewayMayPublish(gatewayId: string, topic: string, prefix = DEFAULT_PREFIX): PublishVerdict {
  // MQTT 3.1.1 §4.7.2: `$` topics are the broker's own; a client never publishes there.
  if (topic.startsWith('$')) return { ok: false, reason: `publish to reserved topic ${topic.slice(0, 80)}` };
  const parsed = parseTopic(topic, prefix);
  if (!parsed) return { ok: false, reason: `publish to foreign topic ${topic.slice(0, 80)}` };
  if (parsed.gw !== gatewayId) return { ok: false, reason: `publish under another gateway's id (${parsed.gw})` };
  if (parsed.kind === 'cmd') return { ok: false, reason: 'publish to its own cmd topic' };
  return { ok: true, kind: parsed.kind };
}

export function gatewayMaySubscribe(gatewayId: string, topicFilter: string, prefix = DEFAULT_PREFIX): boolean {
  // Exact match only: a wildcard filter could reach other gateways' topics.
  return topicFilter === topicFor(gatewayId, 'cmd', prefix);
}
