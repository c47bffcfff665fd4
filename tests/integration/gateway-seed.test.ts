// The demo gateways' provisioning: each demo bench gets its gateway, the plaintext tokens land in
// the data directory's tokens file (owner-only), a restart keeps them, a missing file rotates
// them, and a gateway an admin revoked stays revoked.
import { mkdtemp, rm, stat, unlink } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_BENCHES } from '../../simulators/demo-benches.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { migrateDatabase } from '../../src/lib/server/db/migrate.ts';
import { channels } from '../../src/lib/server/db/schema.ts';
import { revokeGateway, verifyGatewayToken } from '../../src/lib/server/provisioning.ts';
import { DEMO_GATEWAY_TOKENS_FILE, readDemoGatewayTokens, seedDemo } from '../../src/lib/server/seed.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';

let db: FreshDatabase;
let dataDir: string;
beforeAll(async () => {
  db = await useFreshDatabase('gwseed');
  await migrateDatabase();
  dataDir = await mkdtemp(path.join(os.tmpdir(), 'fw-seed-'));
});
afterAll(async () => {
  await db?.restore();
  await rm(dataDir, { recursive: true, force: true });
});

describe('demo gateway seeding', () => {
  it('provisions every demo gateway with a working token kept owner-only, and keeps it on a second run', async () => {
    await seedDemo({ dataDir });
    const tokens = readDemoGatewayTokens(dataDir);
    expect(Object.keys(tokens).sort()).toEqual(DEMO_BENCHES.map((b) => b.gateway).sort());
    for (const b of DEMO_BENCHES) expect(await verifyGatewayToken(b.gateway, tokens[b.gateway]!)).toEqual({ benchId: b.id });
    expect((await stat(path.join(dataDir, DEMO_GATEWAY_TOKENS_FILE))).mode & 0o777).toBe(0o600);
    const labelled = await getDb().select().from(channels).where(eq(channels.gatewayId, 'gw-810'));
    expect(labelled.map((c) => [c.key, c.role]).sort()).toEqual([['a', 'out_a'], ['b', 'out_b'], ['h', 'herald']]);

    await seedDemo({ dataDir });
    expect(readDemoGatewayTokens(dataDir)).toEqual(tokens);
  });

  it('rotates the tokens when the file is missing; a revoked gateway stays revoked', async () => {
    const old = readDemoGatewayTokens(dataDir);
    const [revoked, ...others] = DEMO_BENCHES.map((b) => b.gateway);
    await revokeGateway(revoked!);
    await unlink(path.join(dataDir, DEMO_GATEWAY_TOKENS_FILE));
    await seedDemo({ dataDir });
    const fresh = readDemoGatewayTokens(dataDir);
    expect(Object.keys(fresh).sort()).toEqual([...others].sort());
    for (const gw of others) {
      expect(fresh[gw]).not.toBe(old[gw]);
      expect(await verifyGatewayToken(gw, fresh[gw]!)).not.toBeNull();
      expect(await verifyGatewayToken(gw, old[gw]!)).toBeNull();
    }
    expect(await verifyGatewayToken(revoked!, old[revoked!]!)).toBeNull();
  });
});
