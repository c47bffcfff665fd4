// Benches and gateways: creation, gateway tokens (shown once, stored hashed), revocation, rotation
// and the token check the broker uses at CONNECT.
import { timingSafeEqual } from 'node:crypto';
import { eq } from 'drizzle-orm';
import { z } from 'zod';
import { IMPORT_GATEWAY_PREFIX, isImportGateway } from '../import-shapes.ts';
import { gatewayIdSchema, ID_PATTERN, ID_RULE } from '../contract/wire.ts';
import { getDb } from './db/index.ts';
import { benches, gatewayHealth, gateways, type Bench } from './db/schema.ts';
import { hashSecret, newSecret } from './auth/secrets.ts';
import { runtime } from './runtime.ts';
import { DuplicateError } from './users.ts';

export const GATEWAY_TOKEN_PREFIX = 'fwg_';

/** A new bench's or gateway's id as a form or the CLI takes it: the message goes under its box. */
const newIdSchema = z.string().regex(ID_PATTERN, `use ${ID_RULE}`);

export const benchInputSchema = z.object({
  id: newIdSchema,
  name: z.string().trim().min(1, 'a name is needed').max(100),
  wavelengthNm: z.coerce.number().finite().min(100, 'wavelength below 100 nm?').max(20_000, 'wavelength above 20 µm?'),
  description: z.string().trim().max(2000).default(''),
});
export type BenchInput = z.input<typeof benchInputSchema>;

export async function createBench(input: BenchInput): Promise<Bench> {
  const values = benchInputSchema.parse(input);
  const [row] = await getDb().insert(benches).values(values).onConflictDoNothing({ target: benches.id }).returning();
  if (!row) throw new DuplicateError(`bench ${values.id} already exists`, 'id');
  return row;
}

export class NotFoundError extends Error {}

export async function createGateway(id: string, benchId: string): Promise<{ token: string }> {
  // As a field, so a form shows the refusal under the gateway id's box.
  z.object({
    gatewayId: newIdSchema.refine((g) => !isImportGateway(g), `gateway ids starting with ${IMPORT_GATEWAY_PREFIX} are kept for imported runs`),
  }).parse({ gatewayId: id });
  const db = getDb();
  const [bench] = await db.select({ id: benches.id }).from(benches).where(eq(benches.id, benchId)).limit(1);
  if (!bench) throw new NotFoundError(`bench ${benchId} does not exist`);
  const token = newSecret(GATEWAY_TOKEN_PREFIX);
  const [row] = await db
    .insert(gateways)
    .values({ id, benchId, tokenHash: hashSecret(token) })
    .onConflictDoNothing({ target: gateways.id })
    .returning({ id: gateways.id });
  if (!row) throw new DuplicateError(`gateway ${id} already exists`, 'gatewayId');
  await db.insert(gatewayHealth).values({ gatewayId: id }).onConflictDoNothing();
  return { token };
}

/** Issues a new token; the old one stops working at once (connected sessions are dropped by the broker). */
export async function rotateGatewayToken(id: string): Promise<{ token: string }> {
  // A token would let something connect and publish as an imported recording.
  if (isImportGateway(id)) throw new NotFoundError(`${id} holds an imported recording and takes no token`);
  const token = newSecret(GATEWAY_TOKEN_PREFIX);
  const res = await getDb().update(gateways).set({ tokenHash: hashSecret(token), revokedAt: null }).where(eq(gateways.id, id)).returning({ id: gateways.id });
  if (!res.length) throw new NotFoundError(`gateway ${id} does not exist`);
  runtime().gatewaySessions?.disconnect(id);
  return { token };
}

export async function revokeGateway(id: string): Promise<void> {
  const res = await getDb().update(gateways).set({ tokenHash: null, revokedAt: new Date() }).where(eq(gateways.id, id)).returning({ id: gateways.id });
  if (!res.length) throw new NotFoundError(`gateway ${id} does not exist`);
  runtime().gatewaySessions?.disconnect(id);
}

/** The broker's CONNECT check: the gateway exists, is not revoked, and the token matches its hash. */
export async function verifyGatewayToken(id: string, token: string): Promise<{ benchId: string } | null> {
  if (!gatewayIdSchema.safeParse(id).success || token.length > 200) return null;
  const [row] = await getDb().select({ benchId: gateways.benchId, tokenHash: gateways.tokenHash }).from(gateways).where(eq(gateways.id, id)).limit(1);
  if (!row?.tokenHash) return null;
  const a = Buffer.from(row.tokenHash, 'hex');
  const b = Buffer.from(hashSecret(token), 'hex');
  return a.length === b.length && timingSafeEqual(a, b) ? { benchId: row.benchId } : null;
}
