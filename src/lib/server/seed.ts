// The demo lab, seeded once: people of each role and the simulated benches. Idempotent, so a
// restart keeps data and never duplicates it.
import { eq } from 'drizzle-orm';
import { getDb } from './db/index.ts';
import { benches, users } from './db/schema.ts';
import type { Role } from './auth/roles.ts';
import { createBench } from './provisioning.ts';
import { createUser } from './users.ts';

// Local demo only: these passwords are printed at start and belong to no real account.
export const DEMO_ACCOUNTS: { email: string; name: string; role: Role; password: string }[] = [
  { email: 'admin@lab.example', name: 'Mira Castellanos', role: 'admin', password: 'demo-admin-pass' },
  { email: 'operator@lab.example', name: 'Tomasz Eberle', role: 'operator', password: 'demo-operator-pass' },
  { email: 'observer@lab.example', name: 'Yuki Andersen', role: 'observer', password: 'demo-observer-pass' },
];

export const DEMO_BENCH_ROWS = [
  { id: 'mz-810', name: 'Heralded MZ · 810 nm', wavelengthNm: 810, description: 'Heralded single photons into a bulk Mach-Zehnder; Si SPADs on both outputs and the herald.' },
  { id: 'mz-633', name: 'Attenuated HeNe MZ · 633 nm', wavelengthNm: 632.8, description: 'Attenuated HeNe laser at a few hundred thousand photons per second; Si SPADs.' },
];

export async function seedDemo(): Promise<void> {
  const db = getDb();
  for (const a of DEMO_ACCOUNTS) {
    const [exists] = await db.select({ id: users.id }).from(users).where(eq(users.email, a.email)).limit(1);
    if (!exists) await createUser(a);
  }
  for (const b of DEMO_BENCH_ROWS) {
    const [exists] = await db.select({ id: benches.id }).from(benches).where(eq(benches.id, b.id)).limit(1);
    if (!exists) await createBench(b);
  }
}
