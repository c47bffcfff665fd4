// `npm run gateway -- --id <gw> --token <token> --driver sim|serial|replay [options]`: reads a
// counter and publishes per the wire contract. See gateway/README.md.
import path from 'node:path';
import { parseArgs } from 'node:util';
import { z } from 'zod';
import { DEMO_BENCHES, findDemoBench } from '../simulators/demo-benches.ts';
import { brokerUrlForGateways } from '../src/lib/broker-url.ts';
import { gatewayIdSchema } from '../src/lib/contract/wire.ts';
import type { Counter } from './counter.ts';
import { ReplayCounter } from './drivers/replay.ts';
import { SerialCounter } from './drivers/serial.ts';
import { SimCounter } from './drivers/sim.ts';
import { Gateway } from './gateway.ts';

const USAGE = `usage: npm run gateway -- --id <gateway> --token <token> --driver sim|serial|replay [options]

  --url <mqtt://host:port>   broker (default: MQTT_URL without its credentials, else mqtt://127.0.0.1:$MQTT_PORT or 1883)
  --token <token>            or FRINGEWISE_GATEWAY_TOKEN, which keeps it out of the process list
  --prefix <prefix>          topic prefix (default: MQTT_PREFIX or fringewise/v1)
  --queue-dir <dir>          on-disk queue (default .data/gateway/<id>)
  --queue-max-mb <MiB>       queue bound; the oldest data goes first beyond it (default 1024)
  --max-in-flight <n>        unacknowledged batches at most (default 100)
  --batch-ms <ms>            bin time per batch (default 100)
sim:    --bench <id>  demo bench to simulate (${DEMO_BENCHES.map((b) => b.id).join(', ')}; default: the one whose gateway is --id)
        --seed <n>    simulator seed (default: the bench's)    --dt <ms>  bin width (default 10)
serial: --device <path>  tty (set up with stty), FIFO or file; "-" reads standard input
replay: --file <csv>  export-format CSV    --speed <x>  1 = real time, 0 = as fast as possible (default 1)
        --time now|original  restamp from now (default) or keep the recorded times
        --source <gateway>   which gateway's columns, when the file has several    --dt <ms>  for a one-row file`;

const num = (what: string) => z.coerce.number({ invalid_type_error: `${what} must be a number` }).finite();

const argsSchema = z
  .object({
    id: gatewayIdSchema,
    token: z.string({ required_error: 'a token is needed: --token or FRINGEWISE_GATEWAY_TOKEN' }).min(1).max(200),
    driver: z.enum(['sim', 'serial', 'replay']),
    url: z
      .string()
      .url()
      .refine((u) => /^mqtts?:$/.test(new URL(u).protocol), 'the URL must be mqtt:// or mqtts://'),
    prefix: z.string().min(1).max(100),
    'queue-dir': z.string().min(1),
    'queue-max-mb': num('--queue-max-mb').int().min(1).max(1024 * 1024),
    'max-in-flight': num('--max-in-flight').int().min(1).max(10_000),
    'batch-ms': num('--batch-ms').int().min(1).max(60_000),
    bench: z.string().optional(),
    seed: num('--seed').int().optional(),
    dt: num('--dt').int().min(1).max(60_000).optional(),
    device: z.string().min(1).optional(),
    file: z.string().min(1).optional(),
    speed: num('--speed').min(0).max(10_000),
    time: z.enum(['now', 'original']),
    source: gatewayIdSchema.optional(),
  })
  .superRefine((a, ctx) => {
    if (a.driver === 'serial' && !a.device) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['device'], message: '--driver serial needs --device' });
    if (a.driver === 'replay' && !a.file) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['file'], message: '--driver replay needs --file' });
  });
type Args = z.infer<typeof argsSchema>;

function parse(argv: string[]): Args {
  const { values } = parseArgs({
    args: argv,
    strict: true,
    options: Object.fromEntries(
      ['id', 'token', 'driver', 'url', 'prefix', 'queue-dir', 'queue-max-mb', 'max-in-flight', 'batch-ms', 'bench', 'seed', 'dt', 'device', 'file', 'speed', 'time', 'source'].map(
        (name) => [name, { type: 'string' as const }],
      ),
    ),
  });
  const id = values['id'];
  const parsed = argsSchema.safeParse({
    ...values,
    token: values['token'] ?? process.env['FRINGEWISE_GATEWAY_TOKEN'],
    url: values['url'] ?? brokerUrlForGateways(process.env['MQTT_URL'] || null, '127.0.0.1', Number(process.env['MQTT_PORT'] ?? 1883)),
    prefix: values['prefix'] ?? process.env['MQTT_PREFIX'] ?? 'fringewise/v1',
    'queue-dir': values['queue-dir'] ?? path.join('.data', 'gateway', id ?? ''),
    'queue-max-mb': values['queue-max-mb'] ?? 1024,
    'max-in-flight': values['max-in-flight'] ?? 100,
    'batch-ms': values['batch-ms'] ?? 100,
    speed: values['speed'] ?? 1,
    time: values['time'] ?? 'now',
  });
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new UsageError(`${issue?.path.length ? `--${issue.path.join('.')}: ` : ''}${issue?.message ?? 'invalid arguments'}`);
  }
  return parsed.data;
}

class UsageError extends Error {}

function counterFor(a: Args): Counter {
  const batchMs = a['batch-ms'];
  switch (a.driver) {
    case 'sim': {
      const benchId = a.bench ?? DEMO_BENCHES.find((b) => b.gateway === a.id)?.id ?? 'mz-633';
      const bench = findDemoBench(benchId);
      if (!bench) throw new UsageError(`--bench: no demo bench "${benchId}" (${DEMO_BENCHES.map((b) => b.id).join(', ')})`);
      return new SimCounter({ bench, batchMs, ...(a.seed === undefined ? {} : { seed: a.seed }), ...(a.dt === undefined ? {} : { dtMs: a.dt }) });
    }
    case 'serial':
      return new SerialCounter(a.device === '-' ? { stream: process.stdin, batchMs } : { device: a.device!, batchMs });
    case 'replay':
      return new ReplayCounter({
        file: a.file!,
        speed: a.speed,
        time: a.time,
        batchMs,
        ...(a.source === undefined ? {} : { source: a.source }),
        ...(a.dt === undefined ? {} : { dt: a.dt }),
      });
  }
}

async function main(argv: string[]): Promise<number> {
  if (argv.includes('--help') || argv.includes('-h')) {
    console.log(USAGE);
    return 0;
  }
  const args = parse(argv);
  const gateway = await Gateway.start({
    id: args.id,
    token: args.token,
    url: args.url,
    prefix: args.prefix,
    driver: args.driver,
    counter: counterFor(args),
    queueDir: args['queue-dir'],
    queue: { maxBytes: args['queue-max-mb'] * 1024 * 1024 },
    maxInFlight: args['max-in-flight'],
  });
  console.log(`[gateway ${args.id}] boot ${gateway.boot}: ${args.driver} → ${args.url} (queue ${args['queue-dir']})`);
  const signalled = new Promise<number>((resolve) => {
    for (const signal of ['SIGINT', 'SIGTERM'] as const) process.once(signal, () => resolve(0));
  });
  const finished = gateway.ended.then(async (err) => {
    if (err) console.error(`[gateway ${args.id}] counter stopped: ${err.message}`);
    else console.log(`[gateway ${args.id}] counter finished; delivering what is queued`);
    await gateway.delivered();
    return err ? 1 : 0;
  });
  const code = await Promise.race([signalled, finished]);
  await gateway.stop();
  return code;
}

main(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (err: unknown) => {
    if (err instanceof UsageError || (err instanceof Error && 'code' in err && String(err.code).startsWith('ERR_PARSE_ARGS'))) {
      console.error(`${err.message}\n\n${USAGE}`);
      process.exit(2);
    }
    console.error(err instanceof Error ? err.message : err);
    process.exit(1);
  },
);
