// Export of a bench's raw bins (a time range or a run) as the contract's CSV or as JSON, streamed:
// each gateway's count_batches are read in pages of PAGE_ROWS by keyset on the primary key
// (gateway_id, t0), merged by time, and written as rows as soon as no later batch can add to them.
// Memory holds a page per gateway plus one batch's bins, whatever the length of the range.
import { recordIdSchema } from '../../record-id.ts';
import { and, eq } from 'drizzle-orm';
import { z } from 'zod';
import { columnsOf, metadataLines, rowCells, rowLine, type CsvMeta, type CsvRow } from '../../counts-csv.ts';
import { calibrationsWithData, getBench } from '../benches.ts';
import { getDb, getDbHandle, type Queryable } from '../db/index.ts';
import { unpackRow } from '../db/packed-counts.ts';
import { runs } from '../db/schema.ts';
import { HttpError } from '../http/responses.ts';
import { timeParam } from '../http/time-params.ts';
import type { Slice } from '../ingest/coverage.ts';

/** Batches per page and gateway: a page is at most ~100 × 10,000 bins × channels, a few MB. */
const PAGE_ROWS = 100;
/** Flush the text buffer to the stream at about this size, characters. */
const CHUNK_CHARS = 64 * 1024;
/** A range longer than this is refused; it would be better fetched with the counts API's step, ms. */
const MAX_RANGE_MS = 31 * 86_400_000;

export const exportQuerySchema = z
  .object({
    from: timeParam.optional(),
    to: timeParam.optional(),
    run: recordIdSchema.optional(),
    format: z.enum(['csv', 'json']).default('csv'),
  })
  .refine((q) => q.run !== undefined || (q.from !== undefined && q.to !== undefined), { message: 'give from and to, or run' });
export type ExportQuery = z.infer<typeof exportQuerySchema>;

export interface ExportPlan {
  meta: CsvMeta;
  format: 'csv' | 'json';
}

/** Resolves the range and the metadata; throws HttpError 404/422 before any byte is sent. */
export async function planExport(benchId: string, q: ExportQuery): Promise<ExportPlan> {
  const bench = await getBench(benchId);
  if (!bench) throw new HttpError(404, 'no such bench');
  let fromMs = q.from ?? 0;
  let toMs = q.to ?? 0;
  let run: CsvMeta['run'] = null;
  if (q.run !== undefined) {
    const [r] = await getDb().select().from(runs).where(and(eq(runs.id, q.run), eq(runs.benchId, benchId)));
    if (!r) throw new HttpError(404, 'no such run on this bench');
    fromMs = q.from ?? r.startMs;
    toMs = q.to ?? r.endMs ?? Date.now();
    run = { id: r.id, title: r.title };
  }
  if (!(toMs > fromMs)) throw new HttpError(422, 'to must be after from');
  if (toMs - fromMs > MAX_RANGE_MS) throw new HttpError(422, 'at most 31 days per export; use the counts API with a step for longer spans');
  // Only channels with bins in the range: an earlier import's channels would otherwise stand as
  // empty columns in every later export.
  const chans = await calibrationsWithData(benchId, fromMs, toMs, run?.id ?? null);
  const gws = [...new Set(chans.map((c) => c.gateway))];
  const { rows: flags } = await getDbHandle().pool.query<{ has_x: boolean; has_cc: boolean }>(
    `select exists(select 1 from count_batches where gateway_id = any($1) and t0 < $3 and t1 > $2 and x is not null) as has_x,
            exists(select 1 from count_batches where gateway_id = any($1) and t0 < $3 and t1 > $2 and cc is not null) as has_cc`,
    [gws, fromMs, toMs],
  );
  const meta: CsvMeta = {
    benchId,
    benchName: bench.name,
    wavelengthNm: bench.wavelengthNm,
    fromMs,
    toMs,
    run,
    channels: chans,
    hasX: flags[0]?.has_x ?? false,
    hasCc: flags[0]?.has_cc ?? false,
  };
  return { meta, format: q.format };
}

/** A stored row as read back, its counts channel-major: counts[k·n + j] is channel keys[k], bin j. */
type BatchRow = Omit<Slice, 'channels'> & { counts: number[] };

/** Pages one gateway's batches overlapping [from, to) in t0 order (`pool`: a held transaction's client sees its own rows). */
export async function* gatewayBatches(gatewayId: string, fromMs: number, toMs: number, pool: Queryable = getDbHandle().pool): AsyncGenerator<BatchRow> {
  // The batch holding `from` may start before it: find it with one backward probe on the primary key.
  const first = await pool.query<{ t0: number | null }>('select max(t0) as t0 from count_batches where gateway_id = $1 and t0 <= $2', [gatewayId, fromMs]);
  let after = (first.rows[0]?.t0 ?? fromMs) - 1;
  for (;;) {
    const { rows } = await pool.query<Omit<BatchRow, 'counts' | 'cc'> & { counts: Buffer; cc: Buffer | null }>(
      'select t0, dt, n, keys, counts, x, cc from count_batches where gateway_id = $1 and t0 > $2 and t0 < $3 order by t0 limit $4',
      [gatewayId, after, toMs, PAGE_ROWS],
    );
    for (const r of rows) yield { ...unpackRow(r), t0: Number(r.t0) };
    if (rows.length < PAGE_ROWS) return;
    after = Number(rows[rows.length - 1]!.t0);
  }
}

/** Rows of the range in time order, merged across the bench's gateways. */
export async function* exportRows(meta: CsvMeta): AsyncGenerator<CsvRow> {
  const columns = new Map(meta.channels.map((c, i) => [`${c.gateway}/${c.key}`, i]));
  const gws = [...new Set(meta.channels.map((c) => c.gateway))];
  const cursors = gws.map((gw) => ({ gw, it: gatewayBatches(gw, meta.fromMs, meta.toMs), head: null as BatchRow | null, done: false }));
  const advance = async (c: (typeof cursors)[number]) => {
    const next = await c.it.next();
    c.head = next.done ? null : next.value;
    c.done = !!next.done;
  };
  await Promise.all(cursors.map(advance));
  const pending = new Map<number, CsvRow>();
  const width = meta.channels.length;
  for (;;) {
    const live = cursors.filter((c) => !c.done);
    // Every bin before the earliest unread batch start is complete.
    const frontier = live.length ? Math.min(...live.map((c) => c.head!.t0)) : Infinity;
    if (pending.size) {
      const ready = [...pending.keys()].filter((t) => t < frontier).sort((a, b) => a - b);
      for (const t of ready) {
        yield pending.get(t)!;
        pending.delete(t);
      }
    }
    if (!live.length) return;
    const c = live.find((x) => x.head!.t0 === frontier)!;
    const b = c.head!;
    for (let j = 0; j < b.n; j++) {
      const t = b.t0 + j * b.dt;
      if (t < meta.fromMs || t >= meta.toMs) continue;
      let row = pending.get(t);
      if (!row) {
        row = { t, values: new Array<number | null>(width).fill(null), x: null, cc: null };
        pending.set(t, row);
      }
      b.keys.forEach((key, k) => {
        const col = columns.get(`${c.gw}/${key}`);
        if (col !== undefined) row.values[col] = b.counts[k * b.n + j]!;
      });
      if (row.x === null && b.x) row.x = b.x[j] ?? null;
      if (row.cc === null && b.cc) row.cc = b.cc[j] ?? null;
    }
    await advance(c);
  }
}

/** The whole export as a byte stream; pulls rows only as fast as the client reads. */
export function exportStream(plan: ExportPlan): ReadableStream<Uint8Array> {
  const { meta, format } = plan;
  const encoder = new TextEncoder();
  const rows = exportRows(meta);
  let started = false;
  let first = true;
  return new ReadableStream<Uint8Array>({
    async pull(controller) {
      let buf = '';
      if (!started) {
        started = true;
        buf =
          format === 'csv'
            ? metadataLines(meta) + columnsOf(meta).join(',') + '\n'
            : `{"meta":${JSON.stringify(meta)},"columns":${JSON.stringify(columnsOf(meta))},"rows":[`;
      }
      while (buf.length < CHUNK_CHARS) {
        const next = await rows.next();
        if (next.done) {
          if (format === 'json') buf += '\n]}\n';
          controller.enqueue(encoder.encode(buf));
          controller.close();
          return;
        }
        if (format === 'csv') buf += rowLine(next.value, meta.hasX, meta.hasCc);
        else {
          buf += (first ? '\n' : ',\n') + JSON.stringify(rowCells(next.value, meta.hasX, meta.hasCc));
          first = false;
        }
      }
      controller.enqueue(encoder.encode(buf));
    },
    async cancel() {
      await rows.return(undefined);
    },
  });
}

export function exportFilename(plan: ExportPlan): string {
  const m = plan.meta;
  const span = m.run ? `run-${m.run.id}` : `${new Date(m.fromMs).toISOString().replace(/[:.]/g, '-')}`;
  return `${m.benchId}-${span}.${plan.format}`;
}

