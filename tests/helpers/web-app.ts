// Starts the real Fringewise app in the test process: built Astro handler, own HTTP server on a
// free port, migrations, demo seed and the local mail catcher, against the test run's database.
import { startApp, type RunningApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { createApiToken } from '../../src/lib/server/auth/api-tokens.ts';
import type { Role } from '../../src/lib/server/auth/roles.ts';
import { createUser } from '../../src/lib/server/users.ts';

/** `simulate`: also run the demo benches' simulated gateways (in the run's own data folder, see tests/setup/global-app.ts). */
export async function startWebApp(opts: { simulate?: boolean } = {}): Promise<RunningApp> {
  process.env['FRINGEWISE_SIMULATE'] = '0';
  // Tests read invitations from the catcher; a developer's SMTP_URL must not send them for real.
  delete process.env['SMTP_URL'];
  // MQTT port 0: a free port, so test files never fight over 1883.
  return await startApp({ port: 0, host: '127.0.0.1', seed: true, simulate: opts.simulate ?? false, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
}

let serial = 0;
/** A unique address per call, so test files sharing the database never collide. */
export function uniqueEmail(tag: string): string {
  serial += 1;
  return `${tag}-${process.pid}-${Date.now().toString(36)}-${serial}@test.example`;
}

export const TEST_PASSWORD = 'correct-horse-battery';

/** Creates a user with a password and a personal API token, straight through the server modules. */
export async function userWithToken(role: Role, tag: string = role): Promise<{ email: string; password: string; token: string; id: string }> {
  const email = uniqueEmail(tag);
  const user = await createUser({ email, role, password: TEST_PASSWORD });
  const { token } = await createApiToken(user.id, 'test');
  return { email, password: TEST_PASSWORD, token, id: user.id };
}

/** Sign-in throttling is per process and address: tests that sign in often start from a clean slate. */
export function resetSignInLimits(): void {
  const key = Symbol.for('fringewise.signinLimiters');
  // The limiters live on globalThis (shared with the server bundle); the next attempt makes fresh ones.
  delete (globalThis as Record<symbol, unknown>)[key];
}
