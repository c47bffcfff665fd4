// `npm run dev`: the same services as `npm start` (database, broker, ingest, analysis, simulated
// gateways) with Astro's development server and hot reload in place of the built app. The live
// WebSocket path is attached to the dev server's HTTP server, which Astro endpoints never see.
import { dev } from 'astro';
import type { AstroIntegration } from 'astro';
import { optionsFromEnv, startApp } from './app.ts';

const opts = optionsFromEnv();
const app = await startApp({ ...opts, web: false, build: false });

const liveUpgrades: AstroIntegration = {
  name: 'fringewise-live-upgrades',
  hooks: {
    'astro:server:setup': ({ server }) => {
      server.httpServer?.on('upgrade', (req, socket, head) => {
        const handler = app.upgrades[(req.url ?? '/').split('?')[0] ?? '/'];
        // Anything else (Vite's hot-reload socket) is Vite's own.
        if (handler) handler(req, socket, head);
      });
    },
  },
};

const server = await dev({ root: process.cwd(), server: { port: opts.port, host: opts.host }, integrations: [liveUpgrades] });
console.log(`\nFringewise (development) at http://${opts.host}:${server.address.port}`);

let stopping = false;
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    void server
      .stop()
      .then(() => app.close())
      .then(() => process.exit(0));
  });
}
