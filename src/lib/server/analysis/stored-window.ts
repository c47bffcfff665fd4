// The raw rows every bench's gateways stored over a recent span, as batches: what the live figures
// held in memory before a restart, read back so they do not start blank.
import type { CountBatch } from '../../contract/wire.ts';
import { isImportGateway } from '../../import-shapes.ts';
import { getDb } from '../db/index.ts';
import { channelArrays, unpackRow } from '../db/packed-counts.ts';
import { rawRowsIn } from '../db/raw-rows.ts';
import { gateways } from '../db/schema.ts';

/** Slack for a gateway clock running ahead, ms: the recent bins hold batches ending this far past now. */
const AHEAD_MS = 60_000;

/**
 * Bench → gateway → its stored batches with a bin ending in (from, now + a minute], in time order.
 * Gateways belong to their bench as ingest announces their batches; imported runs' pseudo-gateways
 * are left out, since their bins never feed the live figures.
 */
export async function storedWindow(from: number, now: number): Promise<Map<string, Map<string, CountBatch[]>>> {
  const gws = (await getDb().select({ id: gateways.id, benchId: gateways.benchId }).from(gateways)).filter((g) => !isImportGateway(g.id));
  const out = new Map<string, Map<string, CountBatch[]>>();
  if (!gws.length) return out;
  const benchOf = new Map(gws.map((g) => [g.id, g.benchId]));
  const rows = await rawRowsIn([...benchOf.keys()], from, now + AHEAD_MS);
  for (const r of rows.map(unpackRow)) {
    const benchId = benchOf.get(r.gateway_id)!;
    // Own properties: `ch[key] = …` would set the prototype for a channel "__proto__".
    const channels = channelArrays(r);
    const ch: Record<string, number[]> = Object.fromEntries(r.keys.map((key, k) => [key, channels[k]!]));
    const batch: CountBatch = { v: 1, boot: r.boot, seq: r.seq, t0: r.t0, dt: r.dt, ch, ...(r.x && { x: r.x }), ...(r.cc && { cc: r.cc }) };
    let byGateway = out.get(benchId);
    if (!byGateway) out.set(benchId, (byGateway = new Map()));
    let batches = byGateway.get(r.gateway_id);
    if (!batches) byGateway.set(r.gateway_id, (batches = []));
    batches.push(batch);
  }
  return out;
}
