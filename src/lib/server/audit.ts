// The audit trail: every admin change to people, benches, gateways, channels and limits writes one
// row saying who changed what, with the state before and after. One function, so every caller
// records the same shape; pass the transaction so the row commits or rolls back with the change.
import { desc } from 'drizzle-orm';
import { getDb, type Db } from './db/index.ts';
import { auditLog } from './db/schema.ts';

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

export async function listAudit(limit = 200) {
  return await getDb().select().from(auditLog).orderBy(desc(auditLog.id)).limit(limit);
}
