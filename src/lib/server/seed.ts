// The demo lab, seeded once: people of each role, the simulated benches, their gateways and
// labelled channels, with their corrections and alarm rules (seed-lab-settings.ts). Idempotent, so
// a restart keeps data and never duplicates it.
import { chmodSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { eq } from 'drizzle-orm';
import { z } from 'zod';
import { DEMO_BENCHES } from '../../../simulators/demo-benches.ts';
import { gatewayIdSchema } from '../contract/wire.ts';
import { getDb } from './db/index.ts';
import { benches, channels, gateways, users } from './db/schema.ts';
import type { Role } from './auth/roles.ts';
import { createBench, createGateway, rotateGatewayToken, verifyGatewayToken } from './provisioning.ts';
import { seedLabSettings } from './seed-lab-settings.ts';
import { createUser } from './users.ts';

// Local demo only: these passwords are printed at start and belong to no real account.
export const DEMO_ACCOUNTS: { email: string; name: string; role: Role; password: string }[] = [
  { email: 'admin@lab.example', name: 'Mira Castellanos', role: 'admin', password: 'demo-admin-pass' },
  { email: 'operator@lab.example', name: 'Tomasz Eberle', role: 'operator', password: 'demo-operator-pass' },
  { email: 'observer@lab.example', name: 'Yuki Andersen', role: 'observer', password: 'demo-observer-pass' },
];

/** The simulator's demo benches, as bench rows. */
export const DEMO_BENCH_ROWS = DEMO_BENCHES.map(({ id, name, wavelengthNm, description }) => ({ id, name, wavelengthNm, description }));

/**
 * The demo gateways' plaintext tokens (only hashes are in the database), so `npm start` can run
 * its simulated gateways: `{ "<gateway id>": "<token>" }`, git-ignored under the data directory,
 * readable by its owner only.
 */
export const DEMO_GATEWAY_TOKENS_FILE = 'demo-gateways.json';
const tokensSchema = z.record(gatewayIdSchema, z.string().min(1).max(200));

/** The stored demo gateway tokens; empty when the file is missing or unreadable. */
export function readDemoGatewayTokens(dataDir: string): Record<string, string> {
  try {
    const parsed = tokensSchema.safeParse(JSON.parse(readFileSync(path.join(dataDir, DEMO_GATEWAY_TOKENS_FILE), 'utf8')));
    return parsed.success ? parsed.data : {};
  } catch {
    return {};
  }
}

/**
 * Seeds the demo lab. With `dataDir`, also makes sure each demo gateway has a working token in
 * its tokens file: a gateway not yet provisioned gets one, and one whose token is missing from
 * the file (or no longer matches) has it rotated. A gateway an admin revoked stays revoked.
 */
export async function seedDemo(opts: { dataDir?: string } = {}): Promise<void> {
  const db = getDb();
  for (const a of DEMO_ACCOUNTS) {
    const [exists] = await db.select({ id: users.id }).from(users).where(eq(users.email, a.email)).limit(1);
    if (!exists) await createUser(a);
  }
  const tokens = opts.dataDir ? readDemoGatewayTokens(opts.dataDir) : {};
  const before = JSON.stringify(tokens);
  for (const b of DEMO_BENCHES) {
    const [exists] = await db.select({ id: benches.id }).from(benches).where(eq(benches.id, b.id)).limit(1);
    if (!exists) {
      await createBench({ id: b.id, name: b.name, wavelengthNm: b.wavelengthNm, description: b.description });
      // The settings an admin would enter for these benches: drive limits inside what the piezo
      // reaches, the path geometry and the counter's coincidence window.
      await db
        .update(benches)
        .set({ driveMin: b.scan.min, driveMax: b.scan.max, pathFactor: b.model.optics.pathFactor, coincidenceWindowNs: b.model.coincidenceWindowNs || 2 })
        .where(eq(benches.id, b.id));
    }
    const [gw] = await db.select({ revokedAt: gateways.revokedAt }).from(gateways).where(eq(gateways.id, b.gateway)).limit(1);
    if (!gw) tokens[b.gateway] = (await createGateway(b.gateway, b.id)).token;
    else if (gw.revokedAt) delete tokens[b.gateway];
    else if (opts.dataDir) {
      // Own entries only: a gateway id may be "constructor", which a plain object inherits.
      const stored = Object.hasOwn(tokens, b.gateway) ? tokens[b.gateway] : undefined;
      if (!stored || !(await verifyGatewayToken(b.gateway, stored))) tokens[b.gateway] = (await rotateGatewayToken(b.gateway)).token;
    }
    // Labels and roles as an admin would set them; a label an admin changed is kept.
    await db
      .insert(channels)
      .values(b.channels.map((c) => ({ gatewayId: b.gateway, key: c.key, benchId: b.id, label: c.label, role: c.role })))
      .onConflictDoNothing();
    // Corrections and alarm rules, on a fresh bench only, before its recorded past is fitted with
    // them (app.ts writes that later).
    await seedLabSettings(b);
  }
  if (opts.dataDir && JSON.stringify(tokens) !== before) {
    const file = path.join(opts.dataDir, DEMO_GATEWAY_TOKENS_FILE);
    mkdirSync(opts.dataDir, { recursive: true });
    writeFileSync(file, JSON.stringify(tokens, null, 2) + '\n', { mode: 0o600 });
    // writeFile's mode applies only to a new file.
    chmodSync(file, 0o600);
  }
}
