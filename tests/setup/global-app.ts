// Builds the web app once per test run (only when the sources are newer than dist/), so test files
// can start the real server in-process without building, and never two builds at once.
import { buildIfStale } from '../../src/server/build.ts';

export function setup(): void {
  // Tests start their own gateways when they need them; the demo simulators would only add noise.
  process.env['FRINGEWISE_SIMULATE'] = '0';
  process.env['ASTRO_TELEMETRY_DISABLED'] = '1';
  buildIfStale();
}
