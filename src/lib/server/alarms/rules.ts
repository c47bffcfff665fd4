// Alarm rules: validation (zod) and admin CRUD. Every change writes an audit row in the same
// transaction (who, when, before, after) and tells the running engine to reload.
import { and, asc, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import { ALARM_METRICS, METRIC_INFO, SEVERITIES } from '../../alarm-messages.ts';
import { channelKeySchema, gatewayIdSchema } from '../../contract/wire.ts';
import { finiteNumber, NUMBER_HINT, readFormNumber } from '../../form-number.ts';
import { recordAudit } from '../audit.ts';
import { getBench } from '../benches.ts';
import { getDb } from '../db/index.ts';
import { alarmRules, auditLog, users, type AlarmRule } from '../db/schema.ts';
import { HttpError } from '../http/responses.ts';
import { runtime } from '../runtime.ts';

// The form's messages for the API too: "enter a number with a decimal point" fits a script's slip as well.
const finite = finiteNumber().finite(NUMBER_HINT);

export const ruleInputSchema = z
  .object({
    name: z.string().trim().min(1, 'name is required').max(100),
    metric: z.enum(ALARM_METRICS),
    /** "<gateway>/<key>" for channel metrics, a gateway id for gateway metrics; null = all of the bench's. */
    channel: z
      .string()
      .trim()
      .max(60)
      .nullish()
      .transform((v) => (v ? v : null)),
    threshold: finite,
    clearThreshold: finite,
    // Up to a day (s): longer holds would hide a real problem for a whole night.
    holdSeconds: finiteNumber().min(0, 'cannot be negative').max(86_400, 'at most a day (86400 s)').default(0),
    severity: z.enum(SEVERITIES).default('warning'),
    recipients: z.array(z.string().trim().email('recipients must be e-mail addresses')).max(20).default([]),
    enabled: z.boolean().default(true),
  })
  .superRefine((r, ctx) => {
    const info = METRIC_INFO[r.metric];
    if (info.direction === 'high' && r.clearThreshold > r.threshold) {
      ctx.addIssue({ code: 'custom', path: ['clearThreshold'], message: 'for this metric the clear threshold must be at or below the threshold' });
    }
    if (info.direction === 'low' && r.clearThreshold < r.threshold) {
      ctx.addIssue({ code: 'custom', path: ['clearThreshold'], message: 'for this metric the clear threshold must be at or above the threshold' });
    }
    if (r.channel === null) return;
    if (info.subject === 'bench') {
      ctx.addIssue({ code: 'custom', path: ['channel'], message: 'this metric is bench-wide: leave the channel empty' });
    } else if (info.subject === 'gateway' && !gatewayIdSchema.safeParse(r.channel).success) {
      ctx.addIssue({ code: 'custom', path: ['channel'], message: 'give a gateway id, or leave empty for all gateways' });
    } else if (info.subject === 'channel') {
      const [gw, key, extra] = r.channel.split('/');
      if (extra !== undefined || !gatewayIdSchema.safeParse(gw).success || !channelKeySchema.safeParse(key).success) {
        ctx.addIssue({ code: 'custom', path: ['channel'], message: 'give a channel as <gateway>/<key>, or leave empty for all channels' });
      }
    }
  });
export type RuleInput = z.infer<typeof ruleInputSchema>;

/** The same rule from an HTML form: numbers as text, recipients one per line or comma-separated. */
export const ruleFormSchema = z.preprocess((raw) => {
  const f = (raw ?? {}) as Record<string, string | undefined>;
  return {
    name: f['name'],
    metric: f['metric'],
    channel: f['channel'],
    threshold: readFormNumber(f['threshold']),
    clearThreshold: readFormNumber(f['clearThreshold']),
    holdSeconds: readFormNumber(f['holdSeconds'] || '0'),
    severity: f['severity'],
    recipients: (f['recipients'] ?? '')
      .split(/[\s,;]+/)
      .map((s) => s.trim())
      .filter(Boolean),
    enabled: f['enabled'] === 'on' || f['enabled'] === 'true',
  };
}, ruleInputSchema);

/** What the audit and the API show of a rule: plain JSON, no internal timestamps. */
export function ruleView(r: AlarmRule) {
  return {
    id: r.id,
    benchId: r.benchId,
    name: r.name,
    metric: r.metric,
    channel: r.channel,
    threshold: r.threshold,
    clearThreshold: r.clearThreshold,
    holdSeconds: r.holdSeconds,
    severity: r.severity,
    recipients: r.recipients,
    enabled: r.enabled,
    updatedAt: r.updatedAt.toISOString(),
  };
}
export type RuleView = ReturnType<typeof ruleView>;

function auditShape(r: AlarmRule) {
  const { updatedAt: _updated, ...rest } = ruleView(r);
  return rest;
}

/** The running engine, if this process has one; rules changed elsewhere are picked up on its next refresh. */
function reloadEngine(): void {
  const engine = runtime()['alarms'] as { reload(): Promise<void> } | undefined;
  engine?.reload().catch((err: unknown) => console.warn('[alarms] reload failed:', err));
}

export async function listRules(benchId?: string): Promise<AlarmRule[]> {
  const q = getDb().select().from(alarmRules);
  return await (benchId ? q.where(eq(alarmRules.benchId, benchId)) : q).orderBy(asc(alarmRules.benchId), asc(alarmRules.id));
}

export async function createRule(benchId: string, input: RuleInput, actorId: string | null): Promise<AlarmRule> {
  if (!(await getBench(benchId))) throw new HttpError(404, 'no such bench');
  const row = await getDb().transaction(async (tx) => {
    const [created] = await tx
      .insert(alarmRules)
      .values({ benchId, ...input })
      .returning();
    await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(created!.id), action: 'create', after: auditShape(created!) }, tx);
    return created!;
  });
  reloadEngine();
  return row;
}

export async function updateRule(benchId: string, id: number, input: RuleInput, actorId: string | null): Promise<AlarmRule> {
  const row = await getDb().transaction(async (tx) => {
    const [before] = await tx
      .select()
      .from(alarmRules)
      .where(and(eq(alarmRules.id, id), eq(alarmRules.benchId, benchId)))
      .for('update');
    if (!before) throw new HttpError(404, 'no such alarm rule on this bench');
    const [after] = await tx
      .update(alarmRules)
      .set({ ...input, updatedAt: new Date() })
      .where(eq(alarmRules.id, id))
      .returning();
    await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(id), action: 'update', before: auditShape(before), after: auditShape(after!) }, tx);
    return after!;
  });
  reloadEngine();
  return row;
}

export async function deleteRule(benchId: string, id: number, actorId: string | null): Promise<void> {
  await getDb().transaction(async (tx) => {
    const [before] = await tx
      .delete(alarmRules)
      .where(and(eq(alarmRules.id, id), eq(alarmRules.benchId, benchId)))
      .returning();
    if (!before) throw new HttpError(404, 'no such alarm rule on this bench');
    await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(id), action: 'delete', before: auditShape(before) }, tx);
  });
  reloadEngine();
}

/** The audit rows of alarm rules, newest first, with the actor's e-mail. */
export async function ruleAudit(limit = 100) {
  return await getDb()
    .select({ id: auditLog.id, at: auditLog.at, actor: users.email, entityId: auditLog.entityId, action: auditLog.action, before: auditLog.before, after: auditLog.after })
    .from(auditLog)
    .leftJoin(users, eq(users.id, auditLog.actorId))
    .where(eq(auditLog.entity, 'alarm_rule'))
    .orderBy(desc(auditLog.id))
    .limit(limit);
}
