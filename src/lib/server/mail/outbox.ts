// Reading what the local mail catcher caught, for the admin's outbox page.
import { desc, eq } from 'drizzle-orm';
import { getDb } from '../db/index.ts';
import { caughtMail } from '../db/schema.ts';

export async function listCaughtMail(limit = 200) {
  return await getDb()
    .select({ id: caughtMail.id, receivedAt: caughtMail.receivedAt, to: caughtMail.to, subject: caughtMail.subject })
    .from(caughtMail)
    .orderBy(desc(caughtMail.id))
    .limit(limit);
}

export async function getCaughtMail(id: number) {
  const [row] = await getDb().select().from(caughtMail).where(eq(caughtMail.id, id)).limit(1);
  return row ?? null;
}
