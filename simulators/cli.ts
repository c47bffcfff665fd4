// `npm run simulate -- --bench mz-633 [--seconds 20] [--dt 10] [--seed N] [--sweep from:to:step:dwell:passes] [--out file.csv]`
// Records a demo bench's simulated counts offline as the contract's counts CSV, ready for
// `npm run gateway -- --driver replay` or the bench's import page; writes to stdout without --out.
import { createWriteStream } from 'node:fs';
import { parseArgs } from 'node:util';
import { z } from 'zod';
import { commandBodySchema } from '../src/lib/contract/wire.ts';
import { columnsOf, metadataLines, rowLine, type CsvMeta } from '../src/lib/counts-csv.ts';
import { DEMO_BENCHES, createDemoSimulator, findDemoBench } from './demo-benches.ts';

const argsSchema = z.object({
  bench: z.string(),
  seconds: z.coerce.number().positive().max(86_400).default(20),
  dt: z.coerce.number().int().min(1).max(60_000).default(10),
  seed: z.coerce.number().int().optional(),
  sweep: z
    .string()
    .regex(/^[-\d.]+:[-\d.]+:[\d.]+:\d+:\d+$/, '--sweep is from:to:step:dwell:passes, e.g. 0:60:0.2:10:2')
    .optional(),
  out: z.string().optional(),
  start: z.coerce.number().int().optional(),
});

const { values } = parseArgs({
  options: {
    bench: { type: 'string' },
    seconds: { type: 'string' },
    dt: { type: 'string' },
    seed: { type: 'string' },
    sweep: { type: 'string' },
    out: { type: 'string' },
    start: { type: 'string' },
  },
});
const parsed = argsSchema.safeParse(values);
if (!parsed.success) {
  console.error(`error: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
  console.error(`benches: ${DEMO_BENCHES.map((b) => b.id).join(', ')}`);
  process.exit(2);
}
const opts = parsed.data;
const bench = findDemoBench(opts.bench);
if (!bench) {
  console.error(`error: no demo bench "${opts.bench}"; benches: ${DEMO_BENCHES.map((b) => b.id).join(', ')}`);
  process.exit(2);
}

const sim = createDemoSimulator(bench, opts.seed);
if (opts.sweep) {
  const [from, to, step, dwell, sweeps] = opts.sweep.split(':').map(Number);
  const cmd = commandBodySchema.parse({ op: 'sweep', from, to, step, dwell, sweeps });
  const res = sim.command(cmd);
  if (!res.ok) {
    console.error(`error: ${res.error}`);
    process.exit(2);
  }
}

const dt = opts.dt;
const bins = Math.ceil((opts.seconds * 1000) / dt);
// Bin times on the dt grid, as a gateway would stamp them.
const t0 = Math.floor((opts.start ?? Date.now() - opts.seconds * 1000) / dt) * dt;
const hasCc = bench.model.coincidenceWindowNs > 0;
const meta: CsvMeta = {
  benchId: bench.id,
  benchName: bench.name,
  wavelengthNm: bench.wavelengthNm,
  fromMs: t0,
  toMs: t0 + bins * dt,
  run: null,
  channels: bench.channels.map((c) => ({ gateway: bench.gateway, key: c.key, label: c.label, role: c.role, darkRate: null, darkRateErr: null, deadTimeNs: null, deadTimeModel: 'nonparalyzable', efficiency: 1 })),
  hasX: true,
  hasCc,
};

const out = opts.out ? createWriteStream(opts.out) : process.stdout;
out.write(metadataLines(meta) + columnsOf(meta).join(',') + '\n');
const CHUNK = 1_000;
for (let done = 0; done < bins; done += CHUNK) {
  const n = Math.min(CHUNK, bins - done);
  const batch = sim.next(n, dt);
  let text = '';
  for (let i = 0; i < n; i++) {
    const values = bench.channels.map((c) => batch.ch[c.key]?.[i] ?? null);
    text += rowLine({ t: t0 + (done + i) * dt, values, x: batch.x[i] ?? null, cc: batch.cc?.[i] ?? null }, true, hasCc);
  }
  if (!out.write(text)) await new Promise<void>((resolve) => out.once('drain', () => resolve()));
}
if (opts.out) {
  out.end();
  console.error(`wrote ${bins} bins of ${bench.id} to ${opts.out}`);
}
