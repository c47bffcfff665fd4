// The live alarm message, shared by the server (which pushes it on the bench's WebSocket) and the
// browser islands (which parse it). Pure: no I/O, safe to bundle for the client.
import { z } from 'zod';

export const ALARM_METRICS = ['rate_high', 'rate_low', 'dark_high', 'visibility_low', 'phase_drift', 'gateway_silent', 'rejected_batches'] as const;
export type AlarmMetric = (typeof ALARM_METRICS)[number];

export const SEVERITIES = ['info', 'warning', 'critical'] as const;
export type Severity = (typeof SEVERITIES)[number];

/**
 * Human wording and the unit of each metric's value, for forms, lists and e-mails. `noun` names the
 * value in a sentence ("a channel rate is never negative"); `min`/`max` bound what the value can be
 * (metrics.ts says how each is measured), so a rule's limits outside them could never raise or clear.
 */
export const METRIC_INFO: Record<
  AlarmMetric,
  { label: string; unit: string; direction: 'high' | 'low'; subject: 'channel' | 'gateway' | 'bench'; noun: string; min: number; max: number | null }
> = {
  rate_high: { label: 'Channel rate above a limit (detector overexposure)', unit: 'counts/s', direction: 'high', subject: 'channel', noun: 'a channel rate', min: 0, max: null },
  rate_low: { label: 'Channel rate below a floor', unit: 'counts/s', direction: 'low', subject: 'channel', noun: 'a channel rate', min: 0, max: null },
  dark_high: { label: 'Dark rate high (aux channels kept dark)', unit: 'counts/s', direction: 'high', subject: 'channel', noun: 'a dark rate', min: 0, max: null },
  visibility_low: { label: 'Fringe visibility low', unit: '', direction: 'low', subject: 'bench', noun: 'visibility', min: 0, max: 1 },
  // |drift|: the rule watches its size, whichever way the phase runs.
  phase_drift: { label: 'Phase drifting too fast', unit: 'rad/s', direction: 'high', subject: 'bench', noun: 'the phase drift', min: 0, max: null },
  gateway_silent: { label: 'Gateway silent', unit: 's', direction: 'high', subject: 'gateway', noun: 'a gateway’s silence', min: 0, max: null },
  rejected_batches: { label: 'Rejected batches (per minute)', unit: 'batches/min', direction: 'high', subject: 'gateway', noun: 'the count of rejected batches', min: 0, max: null },
};

export const alarmEventViewSchema = z.object({
  id: z.number().int(),
  /** Null once the rule was deleted; the event keeps its name and metric as they were when it was raised. */
  ruleId: z.number().int().nullable(),
  ruleName: z.string(),
  benchId: z.string(),
  metric: z.enum(ALARM_METRICS),
  subject: z.string(),
  severity: z.enum(SEVERITIES),
  message: z.string(),
  value: z.number().nullable(),
  /** ISO 8601 instants. */
  raisedAt: z.string(),
  clearedAt: z.string().nullable(),
  ackedAt: z.string().nullable(),
  ackedBy: z.string().nullable(),
  ackComment: z.string().nullable(),
});
export type AlarmEventView = z.infer<typeof alarmEventViewSchema>;

/** `{ type: 'alarm', bench, change, event }` on /api/v1/live: the event as it is after the change. */
export const alarmMessageSchema = z.object({
  type: z.literal('alarm'),
  bench: z.string(),
  change: z.enum(['raised', 'cleared', 'acknowledged']),
  event: alarmEventViewSchema,
});
export type AlarmMessage = z.infer<typeof alarmMessageSchema>;

export function alarmMessage(change: AlarmMessage['change'], event: AlarmEventView): AlarmMessage {
  return { type: 'alarm', bench: event.benchId, change, event };
}

/** The event's rule as lists call it: history outlives its rules, and an event of a deleted one says so. */
export function ruleLabel(ruleName: string, deleted: boolean): string {
  return deleted ? `${ruleName} (deleted rule)` : ruleName;
}

/** Open means raised and not yet cleared; it needs attention until acknowledged. */
export function isOpen(e: Pick<AlarmEventView, 'clearedAt'>): boolean {
  return e.clearedAt === null;
}

/** Merges a pushed change into a list (newest first), replacing the event with the same id. */
export function applyAlarmMessage(list: AlarmEventView[], msg: AlarmMessage, max = 100): AlarmEventView[] {
  const rest = list.filter((e) => e.id !== msg.event.id);
  return [msg.event, ...rest].sort((a, b) => (a.raisedAt < b.raisedAt ? 1 : a.raisedAt > b.raisedAt ? -1 : b.id - a.id)).slice(0, max);
}
