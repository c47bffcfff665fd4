// The counts API's CSV answer, in the contract's counts CSV (src/lib/counts-csv.ts, shared with the
// export and the import), plus the step and the resolution it was read from.
import { channelColumn, columnsOf, metadataLines, rowLine } from '../counts-csv.ts';
import { benchCalibrations } from './benches.ts';
import type { CountsResult } from './counts-query.ts';
import type { Bench } from './db/schema.ts';

const RESOLUTION_NOTE = { raw: 'raw bins', '1s': '1 s rollups', '1min': '1 min rollups' } as const;

export async function countsCsv(bench: Bench, from: number, to: number, r: CountsResult): Promise<string> {
  const calibrations = await benchCalibrations(bench.id);
  const chans = r.channelInfo.flatMap((c) => calibrations.filter((k) => k.gateway === c.gateway && k.key === c.key));
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
