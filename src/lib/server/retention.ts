// Retention: how long raw bins, the two rollup levels and the local outbox's mail are kept, and
// the job that enforces it.
//
// The job deletes in bounded steps — at most `stepRows` rows of one gateway per statement, each
// statement its own short transaction, with a pause between — so ingest's inserts never wait
// behind a long-held lock or a burst of WAL. Every step walks the primary key (gateway_id, t0 /
// block_t0), so a step costs the same however large the tables are.
//
// Runs marked keep are exempt: no raw batch or rollup block of any gateway of the run's bench that
// overlaps the run's [start_ms, end_ms) is deleted (an open kept run protects everything after its start).
//
// Why not time partitions: dropping a partition is cheap only when nothing in it must stay, and a
// kept run can sit in any partition; with day partitions we would still need these row deletes for
// the kept spans, plus a partition manager racing ingest for new partitions. Bounded deletes keep
// one mechanism; partitioning count_batches by t0 is noted as future work in DEVELOPERS.md for labs
// whose raw data outgrows it.
import { eq } from 'drizzle-orm';
import { z } from 'zod';
import { formNumber } from '../form-number.ts';
import { recordAudit } from './audit.ts';
import { getDb, getDbHandle } from './db/index.ts';
import { settings } from './db/schema.ts';
import { CC_KEY } from './ingest/rollup-math.ts';
import { runtime } from './runtime.ts';

const DAY_MS = 86_400_000;
const days = formNumber((n) => n.int('whole days').min(1, 'at least 1 day').max(36_500, 'at most 100 years'));
/** A quarter: long enough to look up an alarm mail of last season, short enough that a bench alarming for years does not fill the table. */
const DEFAULT_MAIL_DAYS = 90;

export const retentionSettingsSchema = z
  .object({
    /** Raw bins (count_batches), days. */
    rawDays: days,
    /** 1 s rollups, days. */
    fineDays: days,
    /** 1 min rollups, days. */
    coarseDays: days,
    /** Mail in the local outbox (caught_mail), days; settings saved before it existed get the default. */
    mailDays: days.default(DEFAULT_MAIL_DAYS),
  })
  .refine((s) => s.rawDays <= s.fineDays && s.fineDays <= s.coarseDays, {
    message: 'keep coarser data at least as long as finer data (raw ≤ 1 s ≤ 1 min)',
    path: ['fineDays'],
  });
export type RetentionSettings = z.infer<typeof retentionSettingsSchema>;

/** A month of raw bins (the largest level by far), half a year of 1 s sums, ten years of 1 min sums. */
export const DEFAULT_RETENTION: RetentionSettings = { rawDays: 30, fineDays: 180, coarseDays: 3650, mailDays: DEFAULT_MAIL_DAYS };
const SETTINGS_NAME = 'retention';

export async function getRetention(): Promise<RetentionSettings> {
  const [row] = await getDb().select().from(settings).where(eq(settings.name, SETTINGS_NAME));
  const parsed = retentionSettingsSchema.safeParse(row?.value);
  return parsed.success ? parsed.data : DEFAULT_RETENTION;
}

export async function setRetention(next: RetentionSettings, actorId: string | null): Promise<RetentionSettings> {
  const value = retentionSettingsSchema.parse(next);
  await getDb().transaction(async (tx) => {
    const [before] = await tx.select().from(settings).where(eq(settings.name, SETTINGS_NAME)).for('update');
    await tx
      .insert(settings)
      .values({ name: SETTINGS_NAME, value })
      .onConflictDoUpdate({ target: settings.name, set: { value, updatedAt: new Date() } });
    await recordAudit({ actorId, entity: 'settings', entityId: SETTINGS_NAME, action: 'update', before: before?.value ?? DEFAULT_RETENTION, after: value }, tx);
  });
  return value;
}

export type RetentionLevel = 'raw' | 'fine' | 'coarse';
/** What a pass trims: the levels of counts, and the local outbox's mail. */
export type RetentionTarget = RetentionLevel | 'mail';

export interface RetentionResult {
  startedAt: number;
  finishedAt: number;
  cutoffs: Record<RetentionTarget, number>;
  deleted: Record<RetentionTarget, number>;
  error?: string;
}

export interface RetentionRunOptions {
  now?: number;
  /** Rows per delete statement: small enough that one step holds its locks for milliseconds. */
  stepRows?: number;
  /** Pause between steps, ms, so ingest's transactions interleave. */
  pauseMs?: number;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * The kept runs' spans [s, e) of the bench of gateway $1, as a CTE that each delete statement reads
 * afresh: a run marked to keep while a pass is under way (a pass over a large backlog takes
 * minutes) is spared from the next step on. An open kept run protects everything after its start.
 */
const KEPT_SPANS_OF = `select r.start_ms as s, coalesce(r.end_ms, 9007199254740991) as e
      from runs r join gateways g on g.bench_id = r.bench_id where g.id = $1 and r.keep`;
const KEPT_SPANS = `with k as materialized (${KEPT_SPANS_OF})`;

/** Distinct gateway ids of a table by a loose index scan (one probe per gateway, not a full scan). */
async function gatewaysIn(table: 'count_batches' | 'rollups'): Promise<string[]> {
  const { rows } = await getDbHandle().pool.query<{ id: string }>(
    `with recursive g(id) as (
       select min(gateway_id) from ${table}
       union all
       select (select min(gateway_id) from ${table} where gateway_id > g.id) from g where g.id is not null
     ) select id from g where id is not null`,
  );
  return rows.map((r) => r.id);
}

/** Rollup keys of a gateway (its channels and the coincidences), one probe each. */
async function rollupKeys(gatewayId: string): Promise<string[]> {
  const { rows } = await getDbHandle().pool.query<{ key: string }>(
    `with recursive k(key) as (
       select min(key) from rollups where gateway_id = $1
       union all
       select (select min(key) from rollups where gateway_id = $1 and key > k.key) from k where k.key is not null
     ) select key from k where key is not null`,
    [gatewayId],
  );
  return rows.map((r) => r.key);
}

/**
 * One series of rows in primary-key order: a gateway's raw batches, or one key's blocks of one
 * rollup level. `where` picks it (`$1` is always the gateway, further parameters follow the walk's
 * five) and `end` gives a row's end, both over the alias `x`; `start` is the column of its start.
 */
interface Series {
  table: 'count_batches' | 'rollups';
  where: string;
  start: 't0' | 'block_t0';
  end: string;
  params: unknown[];
}

/**
 * Deletes a series' expired rows in steps, walking its key in time order from one gap between
 * kept spans to the next, each step after the last row it deleted. A row starting inside a kept
 * span is kept, so the walk goes on at the span's end and no step reads past kept rows: a kept day
 * of 100 ms batches is 864,000 rows, the oldest left once what was before it is gone, and a step
 * that read past them took half a second or more, every step of every pass. Rollups were read
 * without their key and level, a scan of the whole table per gateway and level
 * (tests/bench/retention.bench.ts).
 */
async function expire(gatewayId: string, series: Series, cutoff: number, limit: number, pauseMs: number): Promise<number> {
  const pool = getDbHandle().pool;
  const { table, where, start, end } = series;
  let deleted = 0;
  let from = Number.MIN_SAFE_INTEGER;
  for (;;) {
    // Read afresh each step, as the statement below does: a run kept meanwhile is skipped from now on.
    const { rows: spans } = await pool.query<{ s: string; e: string }>(`${KEPT_SPANS_OF} order by r.start_ms`, [gatewayId]);
    let to = cutoff;
    for (const k of spans) {
      const [s, e] = [Number(k.s), Number(k.e)];
      if (from >= s && from < e) from = e;
      else if (s > from) {
        to = Math.min(cutoff, s);
        break;
      }
    }
    if (from >= cutoff) return deleted;
    const res = await pool.query<{ t: string }>(
      `${KEPT_SPANS}
       delete from ${table} where ctid = any(array(
         select x.ctid from ${table} x
          where ${where} and x.${start} >= $2 and x.${start} < $3 and ${end} <= $4
            and not exists (select 1 from k where x.${start} < k.e and ${end} > k.s)
          order by x.${start} limit $5))
       returning ${start} as t`,
      [gatewayId, from, to, cutoff, limit, ...series.params],
    );
    const n = res.rowCount ?? 0;
    deleted += n;
    if (n < limit) {
      // This gap is done: what is left in it overlaps a kept span or ends after the cut-off.
      from = to;
      continue;
    }
    from = Math.max(...res.rows.map((r) => Number(r.t))) + 1;
    await sleep(pauseMs);
  }
}

// A row still listed in the rollup journal waits for its sums to reach the rollups, which outlive it.
const rawSeries: Series = {
  table: 'count_batches',
  where: 'x.gateway_id = $1 and not exists (select 1 from rollup_pending p where p.gateway_id = x.gateway_id and p.t0 = x.t0)',
  start: 't0',
  end: 'x.t1',
  params: [],
};

function rollupSeries(key: string, level: 'fine' | 'coarse'): Series {
  const stepMs = level === 'fine' ? 1_000 : 60_000;
  return { table: 'rollups', where: 'x.gateway_id = $1 and x.key = $6 and x.step_ms = $7', start: 'block_t0', end: 'x.block_t0 + $8::int8', params: [key, stepMs, stepMs * 60] };
}

/**
 * Deletes the local outbox's mail received before the cut-off, in steps along its received_at
 * index, each step from the last message it deleted on (not from the index's start again, where
 * the dead entries of the steps before lie until vacuum). The outbox holds only mail the catcher
 * took: alarm mail waiting for its first try or a retry is in the alarm engine's saved state
 * (settings `alarm-mail`) and mail given up is not kept at all, so no age brings this to it.
 */
async function expireMail(cutoff: number, limit: number, pauseMs: number): Promise<number> {
  const pool = getDbHandle().pool;
  let deleted = 0;
  // As text, to the microsecond: a JS Date would cut it to the millisecond.
  let from = '-infinity';
  for (;;) {
    const { rows } = await pool.query<{ n: number; last: string | null }>(
      `with d as (
         delete from caught_mail where id = any(array(
           select id from caught_mail where received_at >= $1::timestamptz and received_at < $2 order by received_at limit $3))
         returning received_at)
       select count(*)::int as n, max(received_at)::text as last from d`,
      [from, new Date(cutoff), limit],
    );
    const { n, last } = rows[0]!;
    deleted += n;
    if (n < limit || last === null) return deleted;
    // Messages received in the same instant as the last one deleted are read again, the deleted
    // ones no longer seen: a batch of invitations shares its transaction's timestamp.
    from = last;
    await sleep(pauseMs);
  }
}

/** One pass of the retention job. Safe to run while ingest writes; never touches kept runs. */
export async function runRetention(opts: RetentionRunOptions = {}): Promise<RetentionResult> {
  const startedAt = Date.now();
  const now = opts.now ?? startedAt;
  const stepRows = opts.stepRows ?? 500;
  const pauseMs = opts.pauseMs ?? 20;
  const cfg = await getRetention();
  const cutoffs: Record<RetentionTarget, number> = {
    raw: now - cfg.rawDays * DAY_MS,
    fine: now - cfg.fineDays * DAY_MS,
    coarse: now - cfg.coarseDays * DAY_MS,
    mail: now - cfg.mailDays * DAY_MS,
  };
  const deleted: Record<RetentionTarget, number> = { raw: 0, fine: 0, coarse: 0, mail: 0 };
  for (const gw of await gatewaysIn('count_batches')) deleted.raw += await expire(gw, rawSeries, cutoffs.raw, stepRows, pauseMs);
  for (const gw of await gatewaysIn('rollups')) {
    for (const key of await rollupKeys(gw)) {
      for (const level of ['fine', 'coarse'] as const) deleted[level] += await expire(gw, rollupSeries(key, level), cutoffs[level], stepRows, pauseMs);
    }
  }
  deleted.mail = await expireMail(cutoffs.mail, stepRows, pauseMs);
  return { startedAt, finishedAt: Date.now(), cutoffs, deleted };
}

export interface StorageRow {
  benchId: string | null;
  level: RetentionLevel;
  rows: number;
  /** Bins (raw) or sums (rollups) held. */
  values: number;
  /** The table's size split by each bench's share of values: an estimate, bytes. */
  approxBytes: number;
  oldestMs: number | null;
  /** Rows and values estimated (a large raw table is not counted row by row). */
  estimated: boolean;
}

/** Above this many raw rows (PostgreSQL's own estimate) the admin page estimates instead of scanning. */
export const EXACT_RAW_ROWS = 1_000_000;

/**
 * Raw storage per bench without reading every row: the oldest bin by one primary-key probe per
 * gateway, the values from the 1 min sums' bin counts since the hour of that oldest bin (a few
 * rows per channel and hour), the rows as the table's estimated row count shared out by values.
 */
async function estimatedRaw(tableRows: number) {
  const { rows } = await getDbHandle().pool.query<{ bench_id: string | null; vals: number; oldest: number | null }>(
    `with firsts as (
       select g.id, g.bench_id, (select c.t0 from count_batches c where c.gateway_id = g.id order by c.t0 limit 1) as oldest
         from gateways g
     ), sums as (
       select f.id, sum(b) as vals
         from firsts f
         join rollups r on r.gateway_id = f.id and r.step_ms = 60000 and r.key <> $1 and r.block_t0 >= f.oldest - f.oldest % 3600000
         cross join lateral unnest(r.bins) b
        group by f.id
     )
     select f.bench_id, min(f.oldest) as oldest, coalesce(sum(s.vals), 0)::int8 as vals
       from firsts f left join sums s on s.id = f.id
      where f.oldest is not null
      group by f.bench_id`,
    [CC_KEY],
  );
  const total = rows.reduce((a, r) => a + Number(r.vals), 0) || 1;
  return rows.map((r) => ({ bench_id: r.bench_id, rows: Math.round((tableRows * Number(r.vals)) / total), vals: Number(r.vals), oldest: r.oldest }));
}

/** Storage per bench and level, for the admin page: exact up to EXACT_RAW_ROWS raw rows, estimated above (a scan would take minutes). */
export async function storageUsage(opts: { exactRawRows?: number } = {}): Promise<{ rows: StorageRow[]; tableBytes: Record<'count_batches' | 'rollups', number> }> {
  const pool = getDbHandle().pool;
  const sizes = await pool.query<{ raw: number; roll: number; raw_rows: number }>(
    `select pg_total_relation_size('count_batches')::int8 as raw, pg_total_relation_size('rollups')::int8 as roll,
            greatest((select reltuples from pg_class where oid = 'count_batches'::regclass), 0)::int8 as raw_rows`,
  );
  const estimated = Number(sizes.rows[0]?.raw_rows ?? 0) > (opts.exactRawRows ?? EXACT_RAW_ROWS);
  const raw = estimated
    ? { rows: await estimatedRaw(Number(sizes.rows[0]!.raw_rows)) }
    : await pool.query<{ bench_id: string | null; rows: number; vals: number; oldest: number | null }>(
        `select g.bench_id, count(*)::int8 as rows, coalesce(sum(c.n * cardinality(c.keys)), 0)::int8 as vals, min(c.t0) as oldest
           from count_batches c left join gateways g on g.id = c.gateway_id group by g.bench_id`,
      );
  const roll = await pool.query<{ bench_id: string | null; step_ms: number; rows: number; oldest: number | null }>(
    `select g.bench_id, r.step_ms, count(*)::int8 as rows, min(r.block_t0) as oldest
       from rollups r left join gateways g on g.id = r.gateway_id group by g.bench_id, r.step_ms`,
  );
  const tableBytes = { count_batches: Number(sizes.rows[0]?.raw ?? 0), rollups: Number(sizes.rows[0]?.roll ?? 0) };
  const rawTotal = raw.rows.reduce((a, r) => a + Number(r.vals), 0) || 1;
  const rollTotal = roll.rows.reduce((a, r) => a + Number(r.rows), 0) || 1;
  const rows: StorageRow[] = [
    ...raw.rows.map((r) => ({
      benchId: r.bench_id,
      level: 'raw' as const,
      rows: Number(r.rows),
      values: Number(r.vals),
      approxBytes: Math.round((tableBytes.count_batches * Number(r.vals)) / rawTotal),
      oldestMs: r.oldest === null ? null : Number(r.oldest),
      estimated,
    })),
    ...roll.rows.map((r) => ({
      benchId: r.bench_id,
      level: (Number(r.step_ms) === 1_000 ? 'fine' : 'coarse') as RetentionLevel,
      rows: Number(r.rows),
      values: Number(r.rows) * 60,
      approxBytes: Math.round((tableBytes.rollups * Number(r.rows)) / rollTotal),
      oldestMs: r.oldest === null ? null : Number(r.oldest),
      estimated: false,
    })),
  ];
  return { rows, tableBytes };
}

/** The scheduled job; registered on runtime() so the admin page can show it and run it now. */
export class RetentionJob {
  private timer: NodeJS.Timeout | null = null;
  private current: Promise<RetentionResult> | null = null;
  last: RetentionResult | null = null;

  constructor(private readonly everyMs: number) {}

  start(): void {
    this.timer = setInterval(() => void this.runNow(), this.everyMs);
    this.timer.unref();
  }

  get running(): boolean {
    return this.current !== null;
  }

  /** Starts a pass unless one is running; either way resolves with that pass's result. */
  runNow(): Promise<RetentionResult> {
    this.current ??= runRetention()
      .catch((err: unknown): RetentionResult => {
        const t = Date.now();
        console.error('[retention]', err);
        return { startedAt: t, finishedAt: t, cutoffs: { raw: 0, fine: 0, coarse: 0, mail: 0 }, deleted: { raw: 0, fine: 0, coarse: 0, mail: 0 }, error: err instanceof Error ? err.message : String(err) };
      })
      .then((r) => {
        this.last = r;
        this.current = null;
        return r;
      });
    return this.current;
  }

  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await this.current;
  }
}

/** Every 10 min: often enough that a day's expiry goes in small bites, rarely enough to cost nothing. */
export const RETENTION_EVERY_MS = 10 * 60_000;

export function startRetentionJob(everyMs = RETENTION_EVERY_MS): RetentionJob {
  const job = new RetentionJob(everyMs);
  job.start();
  runtime()['retention'] = job;
  return job;
}

/** The running job; typed by shape, not instanceof, because this module loads twice (entry and Astro bundle). */
export function retentionJob(): Pick<RetentionJob, 'runNow' | 'running' | 'last'> | null {
  return (runtime()['retention'] as RetentionJob | undefined) ?? null;
}
