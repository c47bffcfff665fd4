// Alarm rules: validation (zod) and admin CRUD. Every change writes an audit row in the same
// transaction (who, when, before, after) and tells the running engine to reload.
import { and, asc, desc, eq, isNull, sql } from 'drizzle-orm';
import { z } from 'zod';
import { ALARM_METRICS, METRIC_INFO, SEVERITIES, type AlarmMetric } from '../../alarm-messages.ts';
import { channelKeySchema, gatewayIdSchema } from '../../contract/wire.ts';
import { finiteNumber, NUMBER_HINT, readFormNumber } from '../../form-number.ts';
import { isImportGateway } from '../../import-shapes.ts';
import { recordAudit } from '../audit.ts';
import { getBench } from '../benches.ts';
import { getDb } from '../db/index.ts';
import { alarmEvents, alarmRules, auditLog, channels, gateways, users, type AlarmRule } from '../db/schema.ts';
import { isUniqueViolation } from '../db/unique-violation.ts';
import { HttpError } from '../http/responses.ts';
import { runtime } from '../runtime.ts';

// The form's messages for the API too: "enter a number with a decimal point" fits a script's slip as well.
const finite = finiteNumber().finite(NUMBER_HINT);

type LimitField = 'threshold' | 'clearThreshold';

/**
 * What is wrong with a rule's two limits, each tied to its box. The evaluator raises an "above"
 * rule when the value goes past the threshold and clears it once the value falls back below the
 * clear threshold ("below" rules mirror it), so a limit where the value cannot be (a negative
 * rate, a visibility of 1.5) raises at once or never, and one at the edge of the range (an "above"
 * rule clearing below 0 counts/s) never passes. Order is checked only between limits that can be.
 */
function limitIssues(r: { metric: AlarmMetric; threshold: number; clearThreshold: number }): { path: LimitField; message: string }[] {
  const { noun, unit, min, max, direction } = METRIC_INFO[r.metric];
  const at = (v: number) => `${v}${unit ? ` ${unit}` : ''}`;
  const range = max === null ? `${noun} is never below ${at(min)}` : `${noun} lies between ${at(min)} and ${at(max)}`;
  const outside = (['threshold', 'clearThreshold'] as const).filter((f) => r[f] < min || (max !== null && r[f] > max));
  if (outside.length) return outside.map((path) => ({ path, message: range }));
  // Inside the range, a limit at its edge is one the value never passes: a "high" rule clears
  // below its clear threshold and a "low" one raises below its threshold, so that one must be above
  // the lowest value; the limit the value must rise above, below the highest.
  const event = (f: LimitField) => (f === 'threshold' ? 'raises' : 'clears');
  const fallsBelow: LimitField = direction === 'high' ? 'clearThreshold' : 'threshold';
  const risesAbove: LimitField = direction === 'high' ? 'threshold' : 'clearThreshold';
  const issues: { path: LimitField; message: string }[] = [];
  if (r[fallsBelow] === min) {
    issues.push({ path: fallsBelow, message: `must be above ${at(min)}: the alarm ${event(fallsBelow)} once ${noun} falls below this, and it is never below ${at(min)}` });
  }
  if (max !== null && r[risesAbove] === max) {
    issues.push({ path: risesAbove, message: `must be below ${at(max)}: the alarm ${event(risesAbove)} once ${noun} rises above this, and it is never above ${at(max)}` });
  }
  if (issues.length) return issues;
  if (direction === 'high' && r.clearThreshold > r.threshold) {
    return [{ path: 'clearThreshold', message: 'for this metric the clear threshold must be at or below the threshold' }];
  }
  if (direction === 'low' && r.clearThreshold < r.threshold) {
    return [{ path: 'clearThreshold', message: 'for this metric the clear threshold must be at or above the threshold' }];
  }
  return [];
}

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
    limitIssues(r).forEach(({ path, message }) => ctx.addIssue({ code: 'custom', path: [path], message }));
    if (r.channel === null) return;
    const info = METRIC_INFO[r.metric];
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

/** The running engine (engine.ts), if this process has one; rules changed elsewhere are picked up on its next refresh. */
function engine(): { reload(): Promise<void>; ruleDeleted(rule: AlarmRule, closedIds: number[], at: number): Promise<void> } | undefined {
  return runtime()['alarms'] as ReturnType<typeof engine>;
}

function reloadEngine(): void {
  engine()
    ?.reload()
    .catch((err: unknown) => console.warn('[alarms] reload failed:', err));
}

export async function getRule(benchId: string, id: number): Promise<AlarmRule> {
  const [row] = await getDb()
    .select()
    .from(alarmRules)
    .where(and(eq(alarmRules.id, id), eq(alarmRules.benchId, benchId)));
  if (!row) throw new HttpError(404, 'no such alarm rule on this bench');
  return row;
}

export async function listRules(benchId?: string): Promise<AlarmRule[]> {
  const q = getDb().select().from(alarmRules);
  return await (benchId ? q.where(eq(alarmRules.benchId, benchId)) : q).orderBy(asc(alarmRules.benchId), asc(alarmRules.id));
}

/** How many names a refusal lists before "…": enough to spot a typo, short enough to read. */
const LISTED = 8;
const listed = (names: string[]) => (names.length > LISTED ? `${names.slice(0, LISTED).join(', ')}, …` : names.join(', '));

/**
 * Refuses a channel or gateway the bench does not have: the rule would wait for data that never
 * comes. An imported recording's pseudo-gateway counts as none (it never gets new counts).
 */
async function checkSubject(benchId: string, input: RuleInput): Promise<void> {
  if (input.channel === null) return;
  const subject = METRIC_INFO[input.metric].subject;
  const gw = subject === 'gateway' ? input.channel : input.channel.split('/')[0]!;
  if (isImportGateway(gw)) throw new HttpError(422, `${gw} holds an imported recording, which gets no new counts: a rule on it could never raise`, 'channel');
  const db = getDb();
  if (subject === 'gateway') {
    const rows = await db.select({ id: gateways.id }).from(gateways).where(eq(gateways.benchId, benchId)).orderBy(asc(gateways.id));
    const ids = rows.map((g) => g.id).filter((id) => !isImportGateway(id));
    if (ids.includes(gw)) return;
    throw new HttpError(422, `${gw} is not a gateway of this bench; ${ids.length ? `its gateways are ${listed(ids)}` : 'it has no gateways yet'}`, 'channel');
  }
  const rows = await db.select({ gatewayId: channels.gatewayId, key: channels.key }).from(channels).where(eq(channels.benchId, benchId)).orderBy(asc(channels.gatewayId), asc(channels.key));
  const names = rows.filter((c) => !isImportGateway(c.gatewayId)).map((c) => `${c.gatewayId}/${c.key}`);
  if (names.includes(input.channel)) return;
  const known = names.length ? `its channels are ${listed(names)}` : 'no gateway of it has reported a channel yet';
  throw new HttpError(422, `${input.channel} is not a channel of this bench; ${known}`, 'channel');
}

/** The rule's write, with a taken name said on the name's box (as the bench spells it) rather than as a failed insert. */
async function uniquelyNamed<T>(benchId: string, input: RuleInput, write: () => Promise<T>): Promise<T> {
  try {
    return await write();
  } catch (err) {
    if (!isUniqueViolation(err, 'alarm_rules_bench_name_idx')) throw err;
    const [taken] = await getDb()
      .select({ name: alarmRules.name })
      .from(alarmRules)
      .where(and(eq(alarmRules.benchId, benchId), sql`lower(${alarmRules.name}) = lower(${input.name})`));
    throw new HttpError(409, `this bench already has a rule named “${taken?.name ?? input.name}”`, 'name');
  }
}

export async function createRule(benchId: string, input: RuleInput, actorId: string | null): Promise<AlarmRule> {
  if (!(await getBench(benchId))) throw new HttpError(404, 'no such bench');
  await checkSubject(benchId, input);
  const row = await uniquelyNamed(benchId, input, () =>
    getDb().transaction(async (tx) => {
      const [created] = await tx
        .insert(alarmRules)
        .values({ benchId, ...input })
        .returning();
      await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(created!.id), action: 'create', after: auditShape(created!) }, tx);
      return created!;
    }),
  );
  reloadEngine();
  return row;
}

export async function updateRule(benchId: string, id: number, input: RuleInput, actorId: string | null): Promise<AlarmRule> {
  const row = await uniquelyNamed(benchId, input, () =>
    getDb().transaction(async (tx) => {
      const [before] = await tx
        .select()
        .from(alarmRules)
        .where(and(eq(alarmRules.id, id), eq(alarmRules.benchId, benchId)))
        .for('update');
      if (!before) throw new HttpError(404, 'no such alarm rule on this bench');
      await checkSubject(benchId, input);
      const [after] = await tx
        .update(alarmRules)
        .set({ ...input, updatedAt: new Date() })
        .where(eq(alarmRules.id, id))
        .returning();
      await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(id), action: 'update', before: auditShape(before), after: auditShape(after!) }, tx);
      return after!;
    }),
  );
  reloadEngine();
  return row;
}

/**
 * Deletes a rule and keeps its alarms (they carry its name; their rule id empties). Those still
 * raised are cleared now: with no rule, nothing else would ever clear them.
 */
export async function deleteRule(benchId: string, id: number, actorId: string | null): Promise<void> {
  const at = new Date();
  const { before, closed } = await getDb().transaction(async (tx) => {
    // Locked before the close: a raise of this rule being written commits first and is closed
    // below, or waits and then fails on the missing rule, so none is left open without a rule.
    const [before] = await tx
      .select()
      .from(alarmRules)
      .where(and(eq(alarmRules.id, id), eq(alarmRules.benchId, benchId)))
      .for('update');
    if (!before) throw new HttpError(404, 'no such alarm rule on this bench');
    const closed = await tx
      .update(alarmEvents)
      .set({ clearedAt: at })
      .where(and(eq(alarmEvents.ruleId, id), isNull(alarmEvents.clearedAt)))
      .returning({ id: alarmEvents.id });
    await tx.delete(alarmRules).where(eq(alarmRules.id, id));
    await recordAudit({ actorId, entity: 'alarm_rule', entityId: String(id), action: 'delete', before: auditShape(before) }, tx);
    return { before, closed: closed.map((e) => e.id) };
  });
  // Its queue logs its own failures.
  void engine()?.ruleDeleted(before, closed, at.getTime());
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
