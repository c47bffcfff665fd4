// Starts every part of Fringewise in one process, in order, and stops them in reverse:
// database → migrations → demo seed → mail catcher → live path (broker, ingest, hub) → analysis →
// alarms and retention → the demo's recorded past → simulated gateways → web server.
import path from 'node:path';
import { startAlarmEngine, stopAlarmEngine } from '../lib/server/alarms/engine.ts';
import { closeAnalysisPool, fitFringesAsync } from '../lib/server/analysis-worker.ts';
import { startAnalysis } from '../lib/server/analysis/service.ts';
import { brokerUrlForGateways } from '../lib/broker-url.ts';
import { runtime } from '../lib/server/runtime.ts';
import { closeDb } from '../lib/server/db/index.ts';
import { migrateDatabase } from '../lib/server/db/migrate.ts';
import { startMailCatcher } from '../lib/server/mail/catcher.ts';
import { mailCatcherEnabled } from '../lib/server/mail/config.ts';
import { startRetentionJob } from '../lib/server/retention.ts';
import { buildIfStale } from './build.ts';
import { DATA_DIR, connectDatabase } from './database.ts';
import { startWebServer, type UpgradeHandler } from './http.ts';
import { livePathOptionsFromEnv, startLivePath, type LivePathOptions } from './live-path.ts';

export interface AppOptions {
  port: number;
  host: string;
  seed: boolean;
  simulate: boolean;
  build: boolean;
  live: LivePathOptions;
  /** False starts only the live path (the fault tests run the server this way, without a build). */
  web: boolean;
}

export interface RunningApp {
  /** Empty when started without the web server. */
  url: string;
  /** The embedded broker's port (null with an external broker). */
  mqttPort: number | null;
  /** WebSocket upgrade handlers by path, for a web server started elsewhere (`npm run dev`). */
  upgrades: Record<string, UpgradeHandler>;
  close(): Promise<void>;
}

export function optionsFromEnv(): AppOptions {
  return {
    port: Number(process.env['PORT'] ?? 4321),
    host: process.env['HOST'] ?? '127.0.0.1',
    seed: process.env['FRINGEWISE_SEED'] !== '0',
    simulate: process.env['FRINGEWISE_SIMULATE'] !== '0',
    build: process.env['FRINGEWISE_BUILD'] !== '0',
    live: livePathOptionsFromEnv(),
    web: process.env['FRINGEWISE_WEB'] !== '0',
  };
}

export async function startApp(opts: AppOptions): Promise<RunningApp> {
  const stops: (() => Promise<void> | void)[] = [];
  const stopAll = async () => {
    for (const stop of stops.reverse()) {
      try {
        await stop();
      } catch (err) {
        console.warn('[stop]', err instanceof Error ? err.message : err);
      }
    }
  };
  try {
    if (opts.build && opts.web) buildIfStale();
    const cluster = await connectDatabase();
    if (cluster?.startedHere) stops.push(() => cluster.stop());
    stops.push(() => closeDb());
    await migrateDatabase();
    if (opts.seed) {
      const { seedDemo } = await import('../lib/server/seed.ts');
      // The demo gateways' tokens go to the data directory only when they will run here.
      await seedDemo(opts.simulate ? { dataDir: DATA_DIR } : {});
    }
    if (mailCatcherEnabled()) {
      const catcher = await startMailCatcher(Number(process.env['FRINGEWISE_CATCHER_PORT'] ?? 0));
      process.env['FRINGEWISE_CATCHER_URL'] = catcher.url;
      stops.push(() => catcher.close());
    }
    const live = await startLivePath(opts.live);
    stops.push(() => live.close());
    const analysis = startAnalysis({
      fit: (pass, options) => fitFringesAsync({ x: pass.x, countsA: pass.a, countsB: pass.b, exposure: pass.exposure }, options),
      publish: (benchId, message) => live.hub.publish(benchId, message),
    });
    runtime().analysis = analysis;
    stops.push(async () => {
      delete runtime().analysis;
      analysis.close();
      await closeAnalysisPool();
    });
    // Alarm mails link to bench pages: at the public host name behind a proxy, else where this
    // server listens (a port of 0, in tests, is not known yet: no links then).
    const publicHost = process.env['PUBLIC_HOSTNAME'];
    const linkBase = publicHost
      ? `${process.env['FRINGEWISE_SECURE_COOKIES'] === '1' ? 'https' : 'http'}://${publicHost}`
      : opts.port
        ? `http://${opts.host}:${opts.port}`
        : null;
    const alarms = await startAlarmEngine({ mail: { linkBase } });
    stops.push(() => stopAlarmEngine(alarms));
    const retention = startRetentionJob();
    stops.push(() => retention.stop());
    console.log(live.transport.port === null ? '[mqtt] connected to the external broker' : `[mqtt] broker listening on ${opts.live.mqttHost}:${live.transport.port}`);
    if (opts.seed && opts.simulate) {
      // The simulated gateways carry on from the demo benches' recorded past, so it is written (and
      // fitted, which needs the analysis) before they start: their first bin comes after its last.
      const { seedDemoPast } = await import('../lib/server/seed-past.ts');
      const began = performance.now();
      const seeded = await seedDemoPast({ analysis });
      if (seeded.length) console.log(`[demo] recorded past of ${seeded.join(', ')} written in ${((performance.now() - began) / 1000).toFixed(1)} s`);
    }
    if (opts.simulate) {
      // The demo benches' simulated gateways, once the broker is up; stopped before it, so they
      // deliver what they hold and sign off.
      const { readDemoGatewayTokens } = await import('../lib/server/seed.ts');
      const { startDemoGateways } = await import('../../gateway/demo.ts');
      const demo = await startDemoGateways({
        url: brokerUrlForGateways(opts.live.mqttUrl, opts.live.mqttHost, live.transport.port),
        prefix: opts.live.prefix,
        tokens: readDemoGatewayTokens(DATA_DIR),
        queueRoot: path.join(DATA_DIR, 'gateway'),
      });
      stops.push(() => demo.stop());
    }
    const upgrades: Record<string, UpgradeHandler> = { ...live.upgrades };
    if (!opts.web) return { url: '', mqttPort: live.transport.port, upgrades, close: stopAll };
    const web = await startWebServer({ port: opts.port, host: opts.host, upgrades });
    stops.push(() => web.close());
    return { url: web.url, mqttPort: live.transport.port, upgrades, close: stopAll };
  } catch (err) {
    await stopAll();
    throw err;
  }
}
