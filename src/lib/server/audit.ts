// The audit trail: every admin change to people, benches, gateways, channels and limits writes one
// row saying who changed what, with the state before and after. One function, so every caller
// records the same shape; pass the transaction so the row commits or rolls back with the change.
import { desc, eq } from 'drizzle-orm';
import { getDb, type Db } from './db/index.ts';
import { auditLog, users } from './db/schema.ts';

export type AuditEntity = 'user' | 'bench' | 'gateway' | 'channel' | 'alarm_rule' | 'settings' | (string & {});

export interface AuditEntry {
  /** The signed-in user who made the change; null for the CLI or the system itself. */
  actorId: string | null;
  entity: AuditEntity;
  entityId: string;
  action: string;
  before?: unknown;
  after?: unknown;
}

type Executor = Pick<Db, 'insert'>;

/** Never store secrets here: callers pass public fields only (no hashes, no tokens). */
export async function recordAudit(entry: AuditEntry, db: Executor = getDb()): Promise<void> {
  await db.insert(auditLog).values({
    actorId: entry.actorId,
    entity: entry.entity,
    entityId: entry.entityId,
    action: entry.action,
    before: entry.before ?? null,
    after: entry.after ?? null,
  });
}

/** Newest first, with the actor's e-mail (null when the CLI or the system made the change). */
export async function listAudit(limit = 200) {
  return await getDb()
    .select({ id: auditLog.id, at: auditLog.at, actor: users.email, entity: auditLog.entity, entityId: auditLog.entityId, action: auditLog.action, before: auditLog.before, after: auditLog.after })
    .from(auditLog)
    .leftJoin(users, eq(users.id, auditLog.actorId))
    .orderBy(desc(auditLog.id))
    .limit(limit);
}
