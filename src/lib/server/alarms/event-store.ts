// alarm_events rows: written by the engine (raise, clear) and by operators (acknowledge), read by
// the API, the pages and the overview. Rows go out as AlarmEventView, the shape the client knows.
// An event carries its rule's name and metric, so it reads the same after the rule is deleted.
import { and, desc, eq, inArray, isNull, type SQL } from 'drizzle-orm';
import type { AlarmEventView } from '../../alarm-messages.ts';
import { getDb } from '../db/index.ts';
import { alarmEvents, users } from '../db/schema.ts';
import { HttpError } from '../http/responses.ts';

const viewColumns = {
  id: alarmEvents.id,
  ruleId: alarmEvents.ruleId,
  ruleName: alarmEvents.ruleName,
  benchId: alarmEvents.benchId,
  metric: alarmEvents.metric,
  subject: alarmEvents.subject,
  severity: alarmEvents.severity,
  message: alarmEvents.message,
  value: alarmEvents.value,
  raisedAt: alarmEvents.raisedAt,
  clearedAt: alarmEvents.clearedAt,
  ackedAt: alarmEvents.ackedAt,
  ackedBy: users.email,
  ackComment: alarmEvents.ackComment,
};

async function select(where: SQL | undefined, limit: number): Promise<AlarmEventView[]> {
  const rows = await getDb()
    .select(viewColumns)
    .from(alarmEvents)
    .leftJoin(users, eq(users.id, alarmEvents.ackedBy))
    .where(where)
    .orderBy(desc(alarmEvents.raisedAt), desc(alarmEvents.id))
    .limit(limit);
  return rows.map((r) => ({
    ...r,
    raisedAt: r.raisedAt.toISOString(),
    clearedAt: r.clearedAt?.toISOString() ?? null,
    ackedAt: r.ackedAt?.toISOString() ?? null,
  }));
}

export interface EventQuery {
  benchIds?: string[];
  /** Only events still raised, or raised and not yet acknowledged. */
  open?: boolean;
  limit?: number;
}

export async function listEvents(q: EventQuery = {}): Promise<AlarmEventView[]> {
  const conds: SQL[] = [];
  if (q.benchIds) conds.push(inArray(alarmEvents.benchId, q.benchIds));
  if (q.open) conds.push(isNull(alarmEvents.clearedAt));
  return await select(conds.length ? and(...conds) : undefined, Math.min(q.limit ?? 100, 1000));
}

export async function getEvent(id: number): Promise<AlarmEventView | null> {
  const [row] = await select(eq(alarmEvents.id, id), 1);
  return row ?? null;
}

export async function insertRaised(e: {
  ruleId: number;
  ruleName: string;
  metric: AlarmEventView['metric'];
  benchId: string;
  subject: string;
  severity: AlarmEventView['severity'];
  message: string;
  value: number;
  at: number;
}): Promise<AlarmEventView> {
  const [row] = await getDb()
    .insert(alarmEvents)
    .values({ ruleId: e.ruleId, ruleName: e.ruleName, metric: e.metric, benchId: e.benchId, subject: e.subject, severity: e.severity, message: e.message, value: e.value, raisedAt: new Date(e.at) })
    .returning({ id: alarmEvents.id });
  return (await getEvent(row!.id))!;
}

/** Closes the open event of (rule, subject); null when there is none (already closed). */
export async function markCleared(ruleId: number, subject: string, at: number): Promise<AlarmEventView | null> {
  const rows = await getDb()
    .update(alarmEvents)
    .set({ clearedAt: new Date(at) })
    .where(and(eq(alarmEvents.ruleId, ruleId), eq(alarmEvents.subject, subject), isNull(alarmEvents.clearedAt)))
    .returning({ id: alarmEvents.id });
  return rows[0] ? await getEvent(rows[0].id) : null;
}

/** Closes one event by its id; null when it is already closed. For events whose rule is gone, which (rule, subject) no longer finds. */
export async function markClearedById(id: number, at: number): Promise<AlarmEventView | null> {
  const rows = await getDb()
    .update(alarmEvents)
    .set({ clearedAt: new Date(at) })
    .where(and(eq(alarmEvents.id, id), isNull(alarmEvents.clearedAt)))
    .returning({ id: alarmEvents.id });
  return rows[0] ? await getEvent(rows[0].id) : null;
}

/** Events still raised; `ruleId` null where the rule was deleted without closing them (by hand in SQL). */
export async function openEvents(): Promise<{ id: number; ruleId: number | null; subject: string; raisedAt: Date }[]> {
  return await getDb()
    .select({ id: alarmEvents.id, ruleId: alarmEvents.ruleId, subject: alarmEvents.subject, raisedAt: alarmEvents.raisedAt })
    .from(alarmEvents)
    .where(isNull(alarmEvents.clearedAt));
}

export async function acknowledge(benchId: string, eventId: number, userId: string, comment: string): Promise<AlarmEventView> {
  const rows = await getDb()
    .update(alarmEvents)
    .set({ ackedAt: new Date(), ackedBy: userId, ackComment: comment })
    .where(and(eq(alarmEvents.id, eventId), eq(alarmEvents.benchId, benchId), isNull(alarmEvents.ackedAt)))
    .returning({ id: alarmEvents.id });
  if (!rows[0]) {
    const existing = await getEvent(eventId);
    if (!existing || existing.benchId !== benchId) throw new HttpError(404, 'no such alarm on this bench');
    throw new HttpError(409, 'this alarm is already acknowledged');
  }
  return (await getEvent(eventId))!;
}
