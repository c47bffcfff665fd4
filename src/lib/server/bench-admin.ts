// Admin changes to benches, their drive limits, channels and gateways. Each change and its audit
// row commit together; gateway tokens are returned once and never logged. Revoking or rotating a
// gateway also drops its live MQTT session (provisioning.ts asks the broker to).
import { and, asc, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import { coincidenceWindowSchema } from '../coincidence-window.ts';
import { formNumber } from '../form-number.ts';
import { benchIdSchema, channelKeySchema, gatewayIdSchema, statusSchema } from '../contract/wire.ts';
import { pickDriveGateway } from './commands/dispatch.ts';
import { getDb } from './db/index.ts';
import { benches, channels, gateways, runs, type Bench, type Channel, type Gateway } from './db/schema.ts';
import { importGatewayOf, isImportGateway } from '../import-shapes.ts';
import { recordAudit } from './audit.ts';
import { serverEvents } from './events.ts';
import type { SessionUser } from './auth/lucia.ts';
import { HttpError } from './http/responses.ts';
import { createBench, createGateway, revokeGateway, rotateGatewayToken, type BenchInput } from './provisioning.ts';

// Messages leave out the field's name: the form puts its label in front (http/form-action.ts).
/** Optional numeric form field: an empty box means "not set". */
const optionalNum = () => z.preprocess((v) => (typeof v === 'string' && v.trim() === '' ? null : v), formNumber().nullable());

export const benchDetailsSchema = z.object({
  name: z.string().trim().min(1, 'a name is needed').max(100),
  wavelengthNm: formNumber((n) => n.min(100, 'wavelength below 100 nm?').max(20_000, 'wavelength above 20 µm?')),
  description: z.string().trim().max(2000).default(''),
  // 2 for a retro-reflecting mirror moved in one arm; other geometries differ (see the bench page).
  pathFactor: formNumber((n) => n.positive('path factor must be above 0').max(10, 'path factor above 10?')),
});

/** Volts and milliseconds, the units of the wire contract's sweep command. */
export const driveLimitsSchema = z
  .object({
    driveMin: formNumber((n) => n.min(-1000).max(1000)),
    driveMax: formNumber((n) => n.min(-1000).max(1000)),
    driveMaxStep: formNumber((n) => n.positive('largest step must be above 0')),
    driveMinDwellMs: formNumber((n) => n.int('shortest dwell is whole milliseconds').min(1, 'shortest dwell is at least 1 ms').max(60_000)),
  })
  .refine((v) => v.driveMin < v.driveMax, { message: 'the lowest drive must be below the highest', path: ['driveMax'] })
  .refine((v) => v.driveMaxStep <= v.driveMax - v.driveMin, { message: 'the largest step cannot exceed the drive range', path: ['driveMaxStep'] });

export const channelSettingsSchema = z
  .object({
    gatewayId: gatewayIdSchema,
    key: channelKeySchema,
    label: z.string().trim().max(60).default(''),
    // '' clears an explicit role, so the contract's default (first two keys = outputs) applies again.
    role: z.enum(['', 'out_a', 'out_b', 'herald', 'aux']).transform((r) => (r === '' ? null : r)),
    darkRate: optionalNum().refine((v) => v === null || v >= 0, 'dark rate cannot be negative'),
    darkRateErr: optionalNum().refine((v) => v === null || v >= 0, 'uncertainty cannot be negative'),
    deadTimeNs: optionalNum().refine((v) => v === null || (v >= 0 && v <= 1e6), 'dead time must be 0 … 1 000 000 ns'),
    deadTimeModel: z.enum(['nonparalyzable', 'paralyzable']),
    efficiency: formNumber((n) => n.gt(0, 'efficiency must be above 0').max(10, 'relative efficiency above 10?')),
  })
  .refine((v) => v.darkRateErr === null || v.darkRate !== null, { message: 'give the dark rate with its uncertainty', path: ['darkRate'] });

function benchSnapshot(b: Bench) {
  const { createdAt: _created, ...rest } = b;
  return rest;
}

async function loadBench(id: string): Promise<Bench> {
  const [row] = await getDb().select().from(benches).where(eq(benches.id, id)).limit(1);
  if (!row) throw new HttpError(404, `bench ${id} does not exist`);
  return row;
}

export async function createBenchAudited(actor: SessionUser, input: BenchInput): Promise<Bench> {
  const bench = await createBench(input);
  await recordAudit({ actorId: actor.id, entity: 'bench', entityId: bench.id, action: 'create', after: benchSnapshot(bench) });
  return bench;
}

async function patchBench(actor: SessionUser, id: string, action: string, patch: Partial<Bench>): Promise<Bench> {
  const saved = await getDb().transaction(async (tx) => {
    const [before] = await tx.select().from(benches).where(eq(benches.id, id)).for('update');
    if (!before) throw new HttpError(404, `bench ${id} does not exist`);
    const [after] = await tx.update(benches).set(patch).where(eq(benches.id, id)).returning();
    if (!after) throw new HttpError(404, `bench ${id} does not exist`);
    await recordAudit({ actorId: actor.id, entity: 'bench', entityId: id, action, before: benchSnapshot(before), after: benchSnapshot(after) }, tx);
    return after;
  });
  // After the commit, so whoever reloads reads the new row.
  serverEvents().emit('bench-settings-changed', { benchId: id });
  return saved;
}

export async function updateBenchDetails(actor: SessionUser, id: string, input: unknown): Promise<Bench> {
  return await patchBench(actor, id, 'update', benchDetailsSchema.parse(input));
}

export async function updateDriveLimits(actor: SessionUser, id: string, input: unknown): Promise<Bench> {
  return await patchBench(actor, id, 'update_drive_limits', driveLimitsSchema.parse(input));
}

/** The live analysis takes the new window from its next figures on (the change event drops its cached settings). */
export async function updateCoincidenceWindow(actor: SessionUser, id: string, input: unknown): Promise<Bench> {
  return await patchBench(actor, id, 'update_coincidence_window', coincidenceWindowSchema.parse(input));
}

export interface BenchAdminView {
  bench: Bench;
  /** The devices: an imported run's pseudo-gateway has no token to rotate and nothing to be online. */
  gateways: Pick<Gateway, 'id' | 'revokedAt' | 'lastSeenAt' | 'createdAt' | 'status'>[];
  /** The devices' channels; an imported run's carry the corrections its file gave. */
  channels: Channel[];
  /** Imported recordings, newest first, with the run that holds each. */
  imports: { runId: number; title: string; startMs: number; endMs: number; channels: string[] }[];
  /** What the gateway commands go to (the bench's first live one) says its drive reaches; null when it has not said. */
  reach: { gatewayId: string; min: number; max: number; unit: string } | null;
}

export async function benchAdminView(id: string): Promise<BenchAdminView> {
  const db = getDb();
  const bench = await loadBench(id);
  const gws = await db
    .select({ id: gateways.id, revokedAt: gateways.revokedAt, lastSeenAt: gateways.lastSeenAt, createdAt: gateways.createdAt, status: gateways.status })
    .from(gateways)
    .where(eq(gateways.benchId, id))
    .orderBy(asc(gateways.createdAt), asc(gateways.id));
  const chans = await db.select().from(channels).where(eq(channels.benchId, id)).orderBy(asc(channels.gatewayId), asc(channels.key));
  const imported = await db
    .select({ runId: runs.id, title: runs.title, startMs: runs.startMs, endMs: runs.endMs })
    .from(runs)
    .where(and(eq(runs.benchId, id), eq(runs.source, 'import')))
    .orderBy(desc(runs.startMs));
  // The gateway commands go to (dispatch.ts), so the reach shown is the one that refuses them.
  const driver = pickDriveGateway(gws);
  const scan = driver ? statusSchema.pick({ scan: true }).safeParse(driver.status ?? {}) : null;
  const reach = driver && scan?.success && scan.data.scan ? { gatewayId: driver.id, ...scan.data.scan } : null;
  return {
    bench,
    gateways: gws.filter((g) => !isImportGateway(g.id)),
    channels: chans.filter((c) => !isImportGateway(c.gatewayId)),
    imports: imported.map((r) => ({
      ...r,
      endMs: r.endMs ?? r.startMs,
      channels: chans.filter((c) => c.gatewayId === importGatewayOf(r.runId)).map((c) => c.key),
    })),
    reach,
  };
}

export async function updateChannel(actor: SessionUser, benchId: string, input: unknown): Promise<Channel> {
  const { gatewayId, key, ...patch } = channelSettingsSchema.parse(input);
  const updated = await getDb().transaction(async (tx) => {
    const where = and(eq(channels.gatewayId, gatewayId), eq(channels.key, key), eq(channels.benchId, benchId));
    const [before] = await tx.select().from(channels).where(where).for('update');
    if (!before) throw new HttpError(404, `channel ${gatewayId}/${key} is not on bench ${benchId}`);
    const [after] = await tx.update(channels).set(patch).where(where).returning();
    if (!after) throw new HttpError(404, `channel ${gatewayId}/${key} is not on bench ${benchId}`);
    const { createdAt: _b, ...b } = before;
    const { createdAt: _a, ...a } = after;
    await recordAudit({ actorId: actor.id, entity: 'channel', entityId: `${gatewayId}/${key}`, action: 'update', before: b, after: a }, tx);
    return after;
  });
  // After the commit, as for the bench's own settings.
  serverEvents().emit('bench-settings-changed', { benchId });
  return updated;
}

export async function provisionGateway(actor: SessionUser, benchId: string, gatewayId: string): Promise<{ token: string }> {
  benchIdSchema.parse(benchId);
  const res = await createGateway(gatewayId, benchId);
  await recordAudit({ actorId: actor.id, entity: 'gateway', entityId: gatewayId, action: 'provision', after: { benchId } });
  return res;
}

/** Whether the gateway has a token that works (not revoked, not an import): a new one ends it and drops its connection. */
export async function gatewayHasToken(gatewayId: string): Promise<boolean> {
  const [row] = await getDb().select({ tokenHash: gateways.tokenHash }).from(gateways).where(eq(gateways.id, gatewayId)).limit(1);
  return Boolean(row?.tokenHash);
}

export async function rotateGateway(actor: SessionUser, gatewayId: string): Promise<{ token: string }> {
  const res = await rotateGatewayToken(gatewayId);
  await recordAudit({ actorId: actor.id, entity: 'gateway', entityId: gatewayId, action: 'rotate_token' });
  return res;
}

export async function revokeGatewayAudited(actor: SessionUser, gatewayId: string): Promise<void> {
  await revokeGateway(gatewayId);
  await recordAudit({ actorId: actor.id, entity: 'gateway', entityId: gatewayId, action: 'revoke' });
}
