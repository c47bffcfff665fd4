// `npm run bench`: every benchmark, each in its own process (each starts its own database and
// services), one after another so they do not compete for the two cores. Prints one JSON summary
// and writes it to test-results/bench.json. `--soak N` passes the ingest soak length (s) on.
import { spawnSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';

const BENCHES = ['analysis', 'simulator', 'ingest', 'alarm-latency', 'live-view', 'import', 'retention'] as const;

const soakIdx = process.argv.indexOf('--soak');
const soak = soakIdx > 0 ? process.argv[soakIdx + 1] : '60';
const results: Record<string, unknown> = {};
let failed = 0;

for (const name of BENCHES) {
  const file = path.join('tests', 'bench', `${name}.bench.ts`);
  // The V8 flag of `npm start` (package.json): the server under test runs in the benchmark's process.
  const args = ['--max-semi-space-size=64', '--import', 'tsx', file, ...(name === 'ingest' ? ['--soak', soak ?? '60'] : [])];
  console.error(`[bench] ${name}…`);
  const started = Date.now();
  const res = spawnSync(process.execPath, args, { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024, env: { ...process.env, ASTRO_TELEMETRY_DISABLED: '1' } });
  // Each benchmark ends by printing its summary as indented JSON: take the last top-level object.
  const lines = res.stdout.split('\n');
  const start = lines.lastIndexOf('{');
  let summary: unknown = null;
  try {
    // A benchmark may print a verdict line after its summary: stop at the summary's closing brace.
    const end = lines.lastIndexOf('}');
    summary = start >= 0 && end > start ? JSON.parse(lines.slice(start, end + 1).join('\n')) : null;
  } catch {
    summary = null;
  }
  if (res.status !== 0 || summary === null) {
    failed++;
    results[name] = { error: `exit ${res.status}`, stderr: res.stderr.slice(-2000) };
  } else {
    results[name] = summary;
  }
  console.error(`[bench] ${name} done in ${((Date.now() - started) / 1000).toFixed(0)} s`);
}

const out = JSON.stringify({ at: new Date().toISOString(), results }, null, 2);
mkdirSync('test-results', { recursive: true });
writeFileSync(path.join('test-results', 'bench.json'), out);
console.log(out);
process.exit(failed ? 1 : 0);
