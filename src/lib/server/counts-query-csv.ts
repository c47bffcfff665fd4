// The counts API's CSV answer, in the contract's counts CSV (src/lib/counts-csv.ts, shared with the
// export and the import), plus the step and the resolution it was read from.
import { eq } from 'drizzle-orm';
import { channelColumn, columnsOf, metadataLines, rowLine, type CsvChannelMeta } from '../counts-csv.ts';
import type { CountsResult } from './counts-query.ts';
import { getDb } from './db/index.ts';
import { channels, type Bench } from './db/schema.ts';

const RESOLUTION_NOTE = { raw: 'raw bins', '1s': '1 s rollups', '1min': '1 min rollups' } as const;

export async function countsCsv(bench: Bench, from: number, to: number, r: CountsResult): Promise<string> {
  const rows = await getDb().select().from(channels).where(eq(channels.benchId, bench.id));
  const chans: CsvChannelMeta[] = r.channelInfo.map((c) => {
    const row = rows.find((x) => x.gatewayId === c.gateway && x.key === c.key);
    return {
      ...c,
      darkRate: row?.darkRate ?? null,
      darkRateErr: row?.darkRateErr ?? null,
      deadTimeNs: row?.deadTimeNs ?? null,
      deadTimeModel: row?.deadTimeModel ?? 'nonparalyzable',
      efficiency: row?.efficiency ?? 1,
    };
  });
  const meta = { benchId: bench.id, benchName: bench.name, wavelengthNm: bench.wavelengthNm, fromMs: from, toMs: to, run: null, channels: chans, hasX: !!r.x, hasCc: !!r.cc };
  let out = metadataLines(meta);
  out += `# step_ms: ${r.step} (each row sums the bins that start in [t_ms, t_ms + step_ms); read from ${RESOLUTION_NOTE[r.resolution]})\n`;
  out += columnsOf(meta).join(',') + '\n';
  const cols = chans.map((c) => r.channels[channelColumn(c)] ?? []);
  const n = Math.max(0, ...Object.values(r.channels).map((c) => c.length));
  for (let i = 0; i < n; i++) {
    out += rowLine({ t: r.t0 + i * r.step, values: cols.map((c) => c[i] ?? null), x: r.x?.[i] ?? null, cc: r.cc?.[i] ?? null }, meta.hasX, meta.hasCc);
  }
  return out;
}
