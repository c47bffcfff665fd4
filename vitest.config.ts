/// <reference types="vitest/config" />
import { getViteConfig } from 'astro/config';

// Three projects: pure unit tests beside the code, integration tests against a real PostgreSQL,
// MQTT broker and WebSockets, and browser tests against the built app. `npm test` runs all three;
// the services they need are started by tests/setup (never left running from elsewhere).

// expect.poll's own default limit (1 s) fits an idle workstation. The conditions polled here wait
// on a server, a broker, a socket and a browser's render (a sweep command's acknowledgement goes
// browser → server → MQTT → gateway and back), which on a 2-core CI machine running all three
// projects at once can take seconds. A poll returns as soon as its condition holds, so the wider
// limit only lengthens runs that fail.
const POLL = { timeout: 10_000, interval: 50 };

export default getViteConfig({
  test: {
    pool: 'forks',
    projects: [
      {
        extends: true,
        test: {
          name: 'unit',
          include: ['src/**/*.test.ts', 'simulators/**/*.test.ts', 'gateway/**/*.test.ts'],
          testTimeout: 60_000,
        },
      },
      {
        extends: true,
        test: {
          name: 'integration',
          expect: { poll: POLL },
          include: ['tests/integration/**/*.test.ts'],
          // global-app builds dist/ once: several integration tests run the real server in-process.
          globalSetup: ['tests/setup/global-db.ts', 'tests/setup/global-app.ts'],
          testTimeout: 120_000,
          hookTimeout: 120_000,
          poolOptions: { forks: { singleFork: true } },
        },
      },
      {
        extends: true,
        test: {
          name: 'e2e',
          expect: { poll: POLL },
          include: ['tests/e2e/**/*.test.ts'],
          globalSetup: ['tests/setup/global-db.ts', 'tests/setup/global-app.ts'],
          testTimeout: 180_000,
          hookTimeout: 240_000,
          poolOptions: { forks: { singleFork: true } },
        },
      },
    ],
  },
});
