// `npm start` builds the web app when the build is missing or older than the sources, so a
// newcomer never serves a stale bundle and a restart without changes starts at once.
import { execFileSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';

function newestMtime(dir: string): number {
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const full = path.join(dir, entry.name);
    newest = Math.max(newest, entry.isDirectory() ? newestMtime(full) : statSync(full).mtimeMs);
  }
  return newest;
}

export function buildIfStale(root = process.cwd()): void {
  const entry = path.join(root, 'dist', 'server', 'entry.mjs');
  const sources = ['src', 'public', 'astro.config.mjs', 'package-lock.json'].map((p) => path.join(root, p)).filter(existsSync);
  const newestSource = Math.max(...sources.map((p) => (statSync(p).isDirectory() ? newestMtime(p) : statSync(p).mtimeMs)));
  if (existsSync(entry) && statSync(entry).mtimeMs >= newestSource) return;
  console.log('[build] building the web app…');
  execFileSync(path.join(root, 'node_modules', '.bin', 'astro'), ['build', '--silent'], {
    cwd: root,
    stdio: 'inherit',
    // Vite bundles for whatever NODE_ENV says: under the test runner ("test") that was React's
    // development build, slower and louder than what the lab gets.
    env: { ...process.env, NODE_ENV: 'production', ASTRO_TELEMETRY_DISABLED: '1' },
  });
}
