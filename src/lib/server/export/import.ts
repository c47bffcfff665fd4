// Import of a counts CSV into a new run: streamed from the request body (size-capped), parsed by
// CountsCsvReader, and stored ALL-OR-NOTHING in one transaction under a pseudo-gateway
// `imp-<runId>` of the bench (no token, so nothing can connect as it). Rows and rollups are written
// by ingest's own write statement; after COMMIT the run's sweeps are fitted like live ones.
import { Readable, Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { CsvError, parse } from 'csv-parse';
import type pg from 'pg';
import { z } from 'zod';
import { recordAudit } from '../audit.ts';
import { getBench } from '../benches.ts';
import { getDbHandle, inTransaction } from '../db/index.ts';
import { drizzle } from 'drizzle-orm/node-postgres';
import { HttpError } from '../http/responses.ts';
import type { Slice } from '../ingest/coverage.ts';
import { rollupDeltas } from '../ingest/rollup-math.ts';
import { writeStatement } from '../ingest/write-statement.ts';
import { getRetention } from '../retention.ts';
import { runtime } from '../runtime.ts';
import { formatUtcDateTime } from '../../client/format.ts';
import { IMPORT_GATEWAY_PREFIX, importGatewayOf, isImportGateway, MAX_IMPORT_BYTES, overlapMessage, type ImportIssue, type ImportOverlap, type ImportPreview, type ImportResult } from '../../import-shapes.ts';
import { CountsCsvReader, type ChannelInfo } from './import-parser.ts';
import { CSV_PARSE_OPTIONS, RecordLines, splitHead, whereInBody } from './csv-records.ts';

/** Batches buffered before a write inside the import's transaction. */
const WRITE_EVERY = 20;
const PREVIEW_ROWS = 10;

export const importOptionsSchema = z.object({
  title: z.string().trim().min(1, 'give the run a title').max(200).refine((t) => !t.includes('\0'), 'title: text may not contain NUL characters'),
});

export class ImportError extends HttpError {
  constructor(readonly issues: ImportIssue[]) {
    super(422, `the file has ${issues.length === 20 ? '20 or more' : issues.length} problem${issues.length === 1 ? '' : 's'}; nothing was stored`);
  }
}

export function mib(bytes: number): string {
  return `${Number((bytes / 1024 / 1024).toFixed(2))} MiB`;
}

/** The body's bytes, refusing (413) past the limit even when no Content-Length was sent. */
async function* capped(body: ReadableStream<Uint8Array>, maxBytes: number): AsyncGenerator<Uint8Array> {
  let total = 0;
  const reader = body.getReader();
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) return;
      total += value.byteLength;
      if (total > maxBytes) throw new HttpError(413, `the file is larger than ${mib(maxBytes)}`);
      yield value;
    }
  } finally {
    await reader.cancel().catch(() => undefined);
  }
}

/**
 * Refuses a JSON body before csv-parse sees it: read as CSV, the export's JSON gives a line of
 * "a channel key must match…" per field, or a quoting error, where one sentence says what is wrong.
 */
async function* csvOnly(chunks: AsyncGenerator<Uint8Array>): AsyncGenerator<Uint8Array> {
  // The first chunk holding more than a byte order mark and white space decides.
  let start = '';
  for await (const chunk of chunks) {
    if (!start) {
      start = new TextDecoder().decode(chunk.subarray(0, 256)).replace(/^\uFEFF/, '').trimStart();
      if (/^[[{]/.test(start)) throw new ImportError([{ line: 1, message: 'only CSV can be imported; this looks like a JSON export: export the range or run as CSV and import that' }]);
    }
    yield chunk;
  }
}

/** A record as csv-parse hands it on with `raw`. */
interface ParsedRecord {
  record: string[];
  raw: string;
}

/** Feeds every record to the reader; `afterRecord` may return a promise (writes), which pauses the parse until it settles. */
async function readAll(body: ReadableStream<Uint8Array>, reader: CountsCsvReader, maxBytes: number, afterRecord?: (fields: string[], isData: boolean) => Promise<void> | void): Promise<void> {
  const { head, lines, rest } = await splitHead(csvOnly(capped(body, maxBytes)));
  let line = 0;
  let headerSeen = false;
  const take = (fields: string[], raw: string): Promise<void> | void => {
    reader.record(fields, line, raw);
    const isComment = (fields[0] ?? '').trim().startsWith('#');
    const isData = headerSeen && !isComment;
    if (!isComment) headerSeen = true;
    return afterRecord?.(fields, isData);
  };
  for (const h of head ?? []) {
    line = h.line;
    await take(h.fields, h.raw);
  }
  // Records go to a writable, one call each, rather than through an async iterator: a promise per
  // record, with the async hooks the server runs under, was about a sixth of a check's profile.
  const enough = new AbortController();
  const lineOf = new RecordLines();
  const sink = new Writable({
    objectMode: true,
    write(rec: ParsedRecord, _encoding, done) {
      line = lines + lineOf.next(rec.raw);
      const pending = take(rec.record, rec.raw);
      if (reader.full) enough.abort();
      if (pending) pending.then(() => done(), done);
      else done();
    },
  });
  try {
    await pipeline(Readable.from(rest), parse(CSV_PARSE_OPTIONS), sink, { signal: enough.signal });
  } catch (err) {
    // Aborted once the reader holds 20 problems: the rest of the file is not parsed.
    if (enough.signal.aborted) return reader.end(line);
    // Only the CSV parser's own errors describe the file; a database error or a bug is not the
    // uploader's to read (and its message may hold the database's internals): it stays a 500.
    if (!(err instanceof CsvError)) throw err;
    const at = whereInBody(err, lines, line + 1);
    throw new ImportError([...reader.issues, { line: at.line, message: `not readable as CSV: ${at.message}`.slice(0, 200) }]);
  }
  reader.end(line);
}


/** Reads the whole file and reports what an import into the bench would store; stores nothing. */
export async function previewImport(benchId: string, body: ReadableStream<Uint8Array>, maxBytes = MAX_IMPORT_BYTES): Promise<ImportPreview> {
  const bench = await getBench(benchId);
  if (!bench) throw new HttpError(404, 'no such bench');
  const reader = new CountsCsvReader(() => undefined);
  const firstRows: string[][] = [];
  try {
    await readAll(body, reader, maxBytes, (fields, isData) => {
      if (isData && firstRows.length < PREVIEW_ROWS) firstRows.push(fields.map((f) => f.trim()));
    });
  } catch (err) {
    if (!(err instanceof ImportError)) throw err;
    reader.issues.splice(0, reader.issues.length, ...err.issues);
  }
  const fromMs = reader.firstT;
  const toMs = reader.lastT !== null && reader.dt !== null ? reader.lastT + reader.dt : null;
  const overlap = !reader.failed && fromMs !== null && toMs !== null ? await findOverlap(getDbHandle().pool, benchId, null, { fromMs, toMs, sourceBench: reader.sourceBench }) : null;
  const warnings =
    reader.wavelengthNm !== null && reader.wavelengthNm !== bench.wavelengthNm
      ? [`The file was recorded at ${reader.wavelengthNm} nm and this bench is set to ${bench.wavelengthNm} nm: its fits would convert the fringe period to nm/V with ${bench.wavelengthNm} nm. Import it into a ${reader.wavelengthNm} nm bench unless the file's header is wrong.`]
      : [];
  return {
    channels: reader.channels.map((c) => ({ column: c.column, key: c.key, label: c.label })),
    hasX: reader.hasX,
    hasCc: reader.hasCc,
    dtMs: reader.dt,
    rows: reader.rows,
    fromMs,
    toMs,
    firstRows,
    issues: reader.issues,
    overlap,
    warnings,
    rawRetentionDays: (await getRetention()).rawDays,
  };
}


/** Rows and rollups through ingest's own write statement, so imported data is stored exactly as live data is. */
async function insertSlices(client: pg.PoolClient, gatewayId: string, slices: Slice[], seq0: number): Promise<void> {
  const stored = slices.map((slice, i) => ({ gatewayId, slice, boot: 'import', seq: seq0 + i }));
  // No new channels (the import adds them with their labels) and no gateway health to count.
  const { text, values } = writeStatement(stored, rollupDeltas(stored), [], new Map());
  await client.query(text, values);
}

async function insertChannels(client: pg.PoolClient, benchId: string, gatewayId: string, channels: ChannelInfo[]): Promise<void> {
  for (const c of channels) {
    // Role stays unset: the bench's own out_a/out_b keep driving its live figures.
    await client.query(
      `insert into channels (gateway_id, key, bench_id, label, dark_rate, dark_rate_err, dead_time_ns, dead_time_model, efficiency)
       values ($1, $2, $3, $4, $5, $6, $7, $8, $9)`,
      [gatewayId, c.key, benchId, c.label ?? c.column, c.darkRate, c.darkRateErr, c.deadTimeNs, c.deadTimeModel ?? 'nonparalyzable', c.efficiency ?? 1],
    );
  }
}

/** The refused import's 409: the overlap goes along, so the upload island words it in local time. */
export class OverlapError extends HttpError {
  constructor(readonly overlap: ImportOverlap) {
    super(409, overlapMessage(overlap, formatUtcDateTime));
  }
}

/**
 * A bench's time holds one recording. An import over times the bench already has data for (its
 * live gateways' or an earlier import's) would put two series under the same outputs: the counts
 * API would mix their scan positions and coincidences, and its fits would stand beside the live
 * ones. Per gateway, the last row starting before the file's end is the only one that can reach
 * into the span last, and the row holding its start (found by one probe) or the next one the
 * first (rows of a gateway never overlap). The earliest holder is reported.
 */
async function findOverlap(
  db: pg.PoolClient | pg.Pool,
  benchId: string,
  ownGateway: string | null,
  file: { fromMs: number; toMs: number; sourceBench: string | null },
): Promise<ImportOverlap | null> {
  const { rows } = await db.query<{ gateway_id: string; first_t0: string; last_t1: string }>(
    `select g.id as gateway_id, f.t0 as first_t0, l.t1 as last_t1
       from gateways g
       cross join lateral (select t1 from count_batches c where c.gateway_id = g.id and c.t0 < $3 order by c.t0 desc limit 1) l
       cross join lateral (
         select t0 from count_batches c
          where c.gateway_id = g.id and c.t1 > $4
            and c.t0 >= coalesce((select max(p.t0) from count_batches p where p.gateway_id = g.id and p.t0 <= $4), $4)
          order by c.t0 limit 1) f
      where g.bench_id = $1 and g.id is distinct from $2 and l.t1 > $4
      order by f.t0
      limit 1`,
    [benchId, ownGateway, file.toMs, file.fromMs],
  );
  const hit = rows[0];
  if (!hit) return null;
  const run = isImportGateway(hit.gateway_id)
    ? (await db.query<{ id: string; title: string }>('select id, title from runs where bench_id = $1 and id = $2', [benchId, hit.gateway_id.slice(IMPORT_GATEWAY_PREFIX.length)])).rows[0]
    : undefined;
  return {
    fileFromMs: file.fromMs,
    fileToMs: file.toMs,
    heldFromMs: Math.max(Number(hit.first_t0), file.fromMs),
    heldToMs: Math.min(Number(hit.last_t1), file.toMs),
    held: run ? { kind: 'import', runId: Number(run.id), title: run.title } : { kind: 'live', gateway: hit.gateway_id },
    sameBench: file.sourceBench === benchId,
  };
}

/** Stores the file as a new run, or nothing at all (422 with line-numbered issues, 413 past the size limit). */
export async function importCounts(benchId: string, body: ReadableStream<Uint8Array>, opts: { title: string; userId: string | null; maxBytes?: number }): Promise<ImportResult> {
  if (!(await getBench(benchId))) throw new HttpError(404, 'no such bench');
  const result = await inTransaction(async (client) => {
    // Kept from the start: a lab imports a recording to keep it, and one older than raw retention
    // would lose its raw bins (photon statistics, export) at the next pass. Released as any run is
    // (`setRunKeep`); the import's audit row says it was kept.
    const run = await client.query<{ id: number }>(
      `insert into runs (bench_id, title, start_ms, end_ms, started_by, source, keep) values ($1, $2, 0, 0, $3, 'import', true) returning id`,
      [benchId, opts.title, opts.userId],
    );
    const runId = Number(run.rows[0]!.id);
    const gatewayId = importGatewayOf(runId);
    await client.query('insert into gateways (id, bench_id) values ($1, $2)', [gatewayId, benchId]);
    const pending: Slice[] = [];
    let batches = 0;
    let bins = 0;
    const reader = new CountsCsvReader((s) => pending.push(s));
    const write = async () => {
      const slices = pending.splice(0);
      if (!slices.length || reader.failed) return;
      await insertSlices(client, gatewayId, slices, batches);
      batches += slices.length;
      bins += slices.reduce((a, s) => a + s.n, 0);
    };
    await readAll(body, reader, opts.maxBytes ?? MAX_IMPORT_BYTES, () => (pending.length >= WRITE_EVERY ? write() : undefined));
    if (reader.failed) throw new ImportError(reader.issues);
    await write();
    const fromMs = reader.firstT!;
    const toMs = reader.lastT! + reader.dt!;
    // Two imports into one bench at once would each miss the other's uncommitted rows: one at a time.
    await client.query('select pg_advisory_xact_lock(hashtext($1))', [`import:${benchId}`]);
    const overlap = await findOverlap(client, benchId, gatewayId, { fromMs, toMs, sourceBench: reader.sourceBench });
    if (overlap) throw new OverlapError(overlap);
    await client.query('update runs set start_ms = $2, end_ms = $3 where id = $1', [runId, fromMs, toMs]);
    await insertChannels(client, benchId, gatewayId, reader.channels);
    const stored: ImportResult = { runId, gatewayId, keep: true, bins, batches, fromMs, toMs, channels: reader.channels.map((c) => `${gatewayId}/${c.key}`) };
    await recordAudit({ actorId: opts.userId, entity: 'run', entityId: String(runId), action: 'import', after: stored }, drizzle(client));
    return stored;
  });
  await analyse(benchId, result);
  return result;
}

/**
 * Imported data gets the same analysis as live data: its sweeps are fitted and stored like live
 * ones. Live figures and alarms are about the present, so they are not fed with old bins.
 */
async function analyse(benchId: string, r: ImportResult): Promise<void> {
  const analysis = runtime().analysis;
  if (!analysis) return;
  await analysis.fitStored(benchId, r.gatewayId, r.fromMs, r.toMs).catch((err: unknown) => console.warn('[import] fitting failed:', err instanceof Error ? err.message : err));
}
