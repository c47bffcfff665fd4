// `POST /api/v1/benches/{id}/commands`: check the bench's drive limits, pick the gateway that drives
// the bench, publish with a fresh id, and record it. The gateway's ack arrives later on its ack
// topic and reaches the bench's live clients (and the audit trail) through the fan-out.
import { randomUUID } from 'node:crypto';
import { asc, eq } from 'drizzle-orm';
import type { Command, CommandBody } from '../../contract/wire.ts';
import { isImportGateway } from '../../import-shapes.ts';
import { recordAudit } from '../audit.ts';
import { getBench } from '../benches.ts';
import { getDb } from '../db/index.ts';
import { presenceOf } from '../gateway-presence.ts';
import { gateways } from '../db/schema.ts';
import { HttpError } from '../http/responses.ts';
import { runtime } from '../runtime.ts';
import { driveLimitViolation } from './drive-limits.ts';
import { sweepShapeViolation } from './sweep-shape.ts';

/**
 * The bench's drive: the first gateway (oldest first) whose status announces a scan range, else its
 * first gateway; never an imported run's pseudo-gateway, which no device stands behind.
 */
export async function driveGateway(benchId: string): Promise<string | null> {
  return (await driveGatewayRow(benchId))?.id ?? null;
}

async function driveGatewayRow(benchId: string) {
  const all = await getDb()
    .select({ id: gateways.id, status: gateways.status, revokedAt: gateways.revokedAt })
    .from(gateways)
    .where(eq(gateways.benchId, benchId))
    .orderBy(asc(gateways.createdAt), asc(gateways.id));
  return pickDriveGateway(all);
}

/** The rule of `driveGateway` over a bench's gateways, oldest first (the admin page shows its reach). */
export function pickDriveGateway<G extends { id: string; status: unknown }>(oldestFirst: G[]): G | null {
  const rows = oldestFirst.filter((r) => !isImportGateway(r.id));
  const withScan = rows.find((r) => typeof r.status === 'object' && r.status !== null && 'scan' in r.status);
  return withScan ?? rows[0] ?? null;
}

export interface Dispatched {
  id: string;
  gateway: string;
  /**
   * Whether the gateway's retained status says it is online and it has not fallen silent
   * (gateway-presence.ts). Gateways connect with a clean session, so a command sent while it is
   * offline reaches no one and no ack will come: the contract fixes the 202, and this tells the
   * caller not to wait for one.
   */
  gatewayOnline: boolean;
}

export async function dispatchCommand(benchId: string, body: CommandBody, actorId: string): Promise<Dispatched> {
  const bench = await getBench(benchId);
  if (!bench) throw new HttpError(404, 'no such bench');
  const violation = driveLimitViolation(body, bench) ?? sweepShapeViolation(body);
  if (violation) throw new HttpError(422, violation);
  const drive = await driveGatewayRow(benchId);
  if (!drive) throw new HttpError(422, 'this bench has no gateway to send the command to');
  const gateway = drive.id;
  const sender = runtime().commands;
  if (!sender) throw new HttpError(503, 'the live path is not running');
  const command: Command = { ...body, v: 1, id: randomUUID() };
  await sender.publish(gateway, command);
  const gatewayOnline = presenceOf(drive).online;
  // The operation and its figures, not the envelope: the id is the entry's own, and leading with it hid what was commanded.
  await recordAudit({ actorId, entity: 'command', entityId: command.id, action: 'send', after: { ...body, bench: benchId, gateway, gatewayOnline } });
  return { id: command.id, gateway, gatewayOnline };
}
