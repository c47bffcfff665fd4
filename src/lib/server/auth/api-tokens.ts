// Personal API tokens: shown once, stored as a SHA-256 hash, carrying the owner's role.
import { and, eq, isNull } from 'drizzle-orm';
import { getDb } from '../db/index.ts';
import { apiTokens, users } from '../db/schema.ts';
import type { SessionUser } from './lucia.ts';
import { hashSecret, newId, newSecret } from './secrets.ts';

export const TOKEN_PREFIX = 'fwp_';

export async function createApiToken(userId: string, label: string): Promise<{ id: string; token: string }> {
  const token = newSecret(TOKEN_PREFIX);
  const id = newId();
  await getDb().insert(apiTokens).values({ id, userId, label: label.slice(0, 100) || 'token', tokenHash: hashSecret(token) });
  return { id, token };
}

export async function listApiTokens(userId: string) {
  return await getDb()
    .select({ id: apiTokens.id, label: apiTokens.label, createdAt: apiTokens.createdAt, lastUsedAt: apiTokens.lastUsedAt, revokedAt: apiTokens.revokedAt })
    .from(apiTokens)
    .where(eq(apiTokens.userId, userId))
    .orderBy(apiTokens.createdAt);
}

export async function revokeApiToken(userId: string, id: string): Promise<boolean> {
  const res = await getDb()
    .update(apiTokens)
    .set({ revokedAt: new Date() })
    .where(and(eq(apiTokens.id, id), eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    .returning({ id: apiTokens.id });
  return res.length > 0;
}

const lastUsedWrites = new Map<string, number>();

export async function userForApiToken(token: string): Promise<SessionUser | null> {
  if (!token.startsWith(TOKEN_PREFIX) || token.length > 200) return null;
  const [row] = await getDb()
    .select({ tokenId: apiTokens.id, id: users.id, email: users.email, name: users.name, role: users.role, active: users.active })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(and(eq(apiTokens.tokenHash, hashSecret(token)), isNull(apiTokens.revokedAt)))
    .limit(1);
  if (!row || !row.active) return null;
  // Record use at most once a minute per token: scripts poll often and this is only informative.
  const now = Date.now();
  if (now - (lastUsedWrites.get(row.tokenId) ?? 0) > 60_000) {
    lastUsedWrites.set(row.tokenId, now);
    void getDb().update(apiTokens).set({ lastUsedAt: new Date() }).where(eq(apiTokens.id, row.tokenId)).catch(() => undefined);
  }
  return { id: row.id, email: row.email, name: row.name, role: row.role };
}
