// Alarm latency: time from publishing the MQTT batch that crosses a rule's limit to the alarm
// raised (its alarm_events row committed and its live message handed to the WebSocket hub), over
// the real path: broker → ingest → store → 'batch-stored' → evaluator → alarm_events → hub.
// Each trial first publishes a quiet batch (clearing the alarm), then a hot one. Target: < 1 s.
// Run: `npx tsx tests/bench/alarm-latency.bench.ts` (or `run()` from the bench runner).
import { pathToFileURL } from 'node:url';
import { createRule, ruleInputSchema } from '../../src/lib/server/alarms/rules.ts';
import type { AlarmMessage } from '../../src/lib/alarm-messages.ts';
import { getDb } from '../../src/lib/server/db/index.ts';
import { channels } from '../../src/lib/server/db/schema.ts';
import { runtime } from '../../src/lib/server/runtime.ts';
import { startApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { connectGateway, freshGateway, makeBatch, publishBatch } from '../helpers/live-path.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';

const TRIALS = 30;

export async function run(): Promise<Record<string, number>> {
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  process.env['FRINGEWISE_SIMULATE'] = '0';
  const app = await startApp({ port: 0, host: '127.0.0.1', seed: false, simulate: false, build: false, web: false, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  try {
    const { benchId, gatewayId, token } = await freshGateway();
    // The channels its status would announce: a rule names one the bench has.
    await getDb().insert(channels).values(['a', 'b'].map((key) => ({ gatewayId, key, benchId })));
    // 1e6 counts/s raises, below 4e5 clears: a detector about to saturate.
    await createRule(benchId, ruleInputSchema.parse({ name: 'Overexposure', metric: 'rate_high', channel: `${gatewayId}/a`, threshold: 5e5, clearThreshold: 4e5 }), null);
    await (runtime()['alarms'] as { reload(): Promise<void> }).reload();

    const waiters: { change: string; resolve: (at: number) => void }[] = [];
    const live = runtime().live!;
    const publish = live.publish.bind(live);
    live.publish = (bench, msg) => {
      if (msg.type === 'alarm' && bench === benchId) {
        const m = msg as unknown as AlarmMessage;
        const at = performance.now();
        for (const w of waiters.splice(0)) if (w.change === m.change) w.resolve(at);
      }
      publish(bench, msg);
    };
    const next = (change: string) => new Promise<number>((resolve) => waiters.push({ change, resolve }));

    const gw = await connectGateway(app.mqttPort!, gatewayId, token);
    let t0 = Math.floor(Date.now() / 1000) * 1000 - 90_000;
    let seq = 0;
    const send = (perBin: number) => {
      const b = makeBatch(t0, 100, seq++, { dt: 10, value: (k) => (k === 'a' ? perBin : 50) });
      t0 += 1000;
      return publishBatch(gw, gatewayId, b);
    };
    const latencies: number[] = [];
    for (let i = 0; i < TRIALS; i++) {
      if (i > 0) {
        const cleared = next('cleared');
        await send(100); // 1e4 counts/s
        await cleared;
      }
      const raised = next('raised');
      const started = performance.now();
      await send(10_000); // 1e6 counts/s
      latencies.push((await raised) - started);
    }
    gw.end(true);
    latencies.sort((a, b) => a - b);
    const q = (p: number) => Math.round(latencies[Math.min(latencies.length - 1, Math.floor(p * latencies.length))]! * 10) / 10;
    return { alarmTrials: TRIALS, alarmLatencyMsMedian: q(0.5), alarmLatencyMsP95: q(0.95), alarmLatencyMsMax: q(1) };
  } finally {
    await app.close();
    if (ownDb) await stopTestDb();
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  run().then(
    (r) => {
      console.log(JSON.stringify(r, null, 2));
      console.log((r['alarmLatencyMsMax'] ?? Infinity) < 1000 ? 'target met (< 1 s)' : 'target NOT met');
      process.exit(0);
    },
    (err) => {
      console.error(err);
      process.exit(1);
    },
  );
}
