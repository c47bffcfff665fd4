// Builds the web app once per test run (only when the sources are newer than dist/), so test files
// can start the real server in-process without building, and never two builds at once.
import { mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { buildIfStale } from '../../src/server/build.ts';

let dataDir: string | undefined;

export function setup(): void {
  // Tests start their own gateways when they need them; the demo simulators would only add noise.
  process.env['FRINGEWISE_SIMULATE'] = '0';
  process.env['ASTRO_TELEMETRY_DISABLED'] = '1';
  // A data folder of the run's own: the demo gateways' queues (locked per process) and tokens must
  // never meet those of an app a developer is running from the same checkout.
  dataDir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-data-'));
  process.env['FRINGEWISE_DATA_DIR'] = dataDir;
  buildIfStale();
}

export function teardown(): void {
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
}
