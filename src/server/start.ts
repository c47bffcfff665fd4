// `npm start`: everything a newcomer needs, in one process, stopped cleanly with Ctrl-C.
import { DEMO_ACCOUNTS } from '../lib/server/seed.ts';
import { optionsFromEnv, startApp } from './app.ts';
import { firstAdminHint } from './first-admin.ts';

const opts = optionsFromEnv();
const app = await startApp(opts);
console.log(`\nFringewise is running at ${app.url}`);
if (opts.seed) {
  console.log('Demo accounts (local demo only):');
  for (const a of DEMO_ACCOUNTS) console.log(`  ${a.role.padEnd(8)} ${a.email}  password: ${a.password}`);
}
const hint = await firstAdminHint();
if (hint) console.log(hint);
console.log('Press Ctrl-C to stop.\n');

let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    console.log('\nStopping…');
    void app.close().then(() => process.exit(0));
  });
}
