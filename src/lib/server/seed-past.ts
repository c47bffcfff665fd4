// The demo benches' recent past (simulators/demo-past.ts), written once into a freshly seeded demo
// lab, so a newcomer finds history, fitted passes and finished runs with notes. The bins go under
// the demo gateways' own ids through ingest's write statement, as the simulated gateways' bins
// do (rows merged and rolled up by the same code); the passes are fitted by the analysis service's
// `fitStored`, as an import's are; runs and notes go through runs.ts, their snapshots computed by
// the live figures' own function from the recorded bins. A bench's whole past is one transaction:
// a start interrupted anywhere in it (Ctrl-C, a crash) leaves nothing of it, so the next start
// finds the bench fresh and writes it whole, as an uninterrupted start would have.
import { eq } from 'drizzle-orm';
import { SIM_BATCH_MS, SIM_DT_MS } from '../../../gateway/drivers/sim.ts';
import { findDemoBench, type DemoBench } from '../../../simulators/demo-benches.ts';
import { DEMO_PAST, minutesBefore, pastStart, recordPast, sweepSpans, type DemoPast, type PastChunk } from '../../../simulators/demo-past.ts';
import type { BenchFigures } from '../bench-figures.ts';
import { DEFAULT_COINCIDENCE_WINDOW_NS } from '../coincidence-window.ts';
import type { CountBatch } from '../contract/wire.ts';
import { shownVisibility } from '../sweep-visibility.ts';
import { computeFigures, SWEEP_FRESH_MS } from './analysis/live-figures.ts';
import { RecentBins } from './analysis/recent-bins.ts';
import { FIGURES_WINDOW_MS, type AnalysisService } from './analysis/service.ts';
import { MAX_SWEEPS, sweepsBetween } from './analysis/sweeps-store.ts';
import { benchCalibrations } from './benches.ts';
import { getDb, getDbHandle, inTransaction, type Tx } from './db/index.ts';
import { benches } from './db/schema.ts';
import { gatewayBatches } from './export/export.ts';
import type { Slice } from './ingest/coverage.ts';
import { rollupDeltas } from './ingest/rollup-math.ts';
import { writeStatement, type StoredSlice } from './ingest/write-statement.ts';
import { addNote, setRunKeep, startRun, stopRun } from './runs.ts';
import { DEMO_ACCOUNTS } from './seed.ts';

/** Boot id of the recorded rows: the live gateway picks a new one at each start, as the contract asks. */
export const DEMO_PAST_BOOT = 'demo-past';
/** Chunks of the recording per write: ten minutes of 10 ms bins, a few MB of parameters. */
const WRITE_EVERY = 10;
/** Phase readings, one a second, a snapshot's drift rate is fitted to (the live figures need 5, keep up to 60). */
const SNAPSHOT_READINGS = 6;

function toSlice(c: PastChunk): Slice {
  const keys = Object.keys(c.ch).sort();
  return { t0: c.t0, dt: c.dt, n: c.x.length, keys, channels: keys.map((k) => c.ch[k]!), x: c.x, cc: c.cc ?? null };
}

/**
 * Writes the recent past of every demo bench that has never stored a bin nor held a run, ending
 * at `now` (on the bin grid), each bench's bins, fits, runs and notes committed together; a bench
 * that has either is left as it is, so a later start adds nothing. Runs before the simulated
 * gateways start: their bins begin where the past ends. Resolves with the benches given a past.
 */
export async function seedDemoPast(opts: { analysis: Pick<AnalysisService, 'fitStored'>; now?: number }): Promise<string[]> {
  const endMs = Math.floor((opts.now ?? Date.now()) / SIM_DT_MS) * SIM_DT_MS;
  const people = await getDbHandle().pool.query<{ id: string; email: string }>('select id, email from users where email = any($1)', [DEMO_ACCOUNTS.map((a) => a.email)]);
  const personOf = (role: 'operator' | 'admin') => {
    const email = DEMO_ACCOUNTS.find((a) => a.role === role)!.email;
    const row = people.rows.find((p) => p.email === email);
    if (!row) throw new Error(`the demo ${role} ${email} is missing`);
    return row.id;
  };
  const seeded: string[] = [];
  const pasts: Promise<void>[] = [];
  try {
    for (const past of DEMO_PAST) {
      const bench = findDemoBench(past.benchId)!;
      // Settled once the bench is recorded (true) or found not fresh (false); `whole` once it is committed.
      let recorded!: (fresh: boolean) => void;
      const wasFresh = new Promise<boolean>((resolve) => (recorded = resolve));
      const whole = inTransaction(async (client, tx) => {
        const fresh = await recordIfFresh(client, past, bench, endMs);
        recorded(fresh);
        if (!fresh) return;
        for (const span of sweepSpans(past, endMs)) await opts.analysis.fitStored(bench.id, bench.gateway, span.from, span.to, tx);
        await addRuns(past, bench.gateway, endMs, personOf, tx);
      });
      // Awaited below; a failure meanwhile is not an unhandled one.
      whole.catch(() => undefined);
      pasts.push(whole);
      // The fits run on the analysis worker while this thread simulates the next bench, each bench
      // in its own transaction (no page watches yet, so nothing is announced that could roll back).
      if (await Promise.race([wasFresh, whole.then(() => false)])) seeded.push(bench.id);
    }
  } catch (err) {
    await Promise.allSettled(pasts);
    throw err;
  }
  await Promise.all(pasts);
  return seeded;
}

/** The bench's recording, when its gateway has no bins and the bench no runs; false when it was not fresh. */
async function recordIfFresh(client: Tx['client'], past: DemoPast, bench: DemoBench, endMs: number): Promise<boolean> {
  // Two instances starting on one fresh database would each see it empty: the second waits for the first's commit.
  await client.query('select pg_advisory_xact_lock(hashtext($1))', [`demo-past:${bench.id}`]);
  const { rows } = await client.query(
    `select 1 from gateways g
      where g.id = $1 and g.bench_id = $2
        and not exists (select 1 from count_batches c where c.gateway_id = g.id)
        and not exists (select 1 from runs r where r.bench_id = $2)`,
    [bench.gateway, bench.id],
  );
  if (rows.length === 0) return false;
  const start = pastStart(past, endMs);
  let pending: StoredSlice[] = [];
  const write = async () => {
    const { text, values } = writeStatement(pending, rollupDeltas(pending), [], new Map());
    await client.query(text, values);
    pending = [];
  };
  for (const chunk of recordPast(bench, past, endMs, SIM_DT_MS)) {
    // seq as the live gateway numbers its batches, so the health page counts them alike.
    pending.push({ gatewayId: bench.gateway, slice: toSlice(chunk), boot: DEMO_PAST_BOOT, seq: Math.floor((chunk.t0 - start) / SIM_BATCH_MS) });
    if (pending.length >= WRITE_EVERY) await write();
  }
  if (pending.length) await write();
  return true;
}

/** The finished runs over the recording, through runs.ts as an operator's would go, in the recording's transaction. */
async function addRuns(past: DemoPast, gateway: string, endMs: number, personOf: (role: 'operator' | 'admin') => string, tx: Tx): Promise<void> {
  const at = (minutes: number) => endMs - minutesBefore(minutes);
  for (const r of past.runs) {
    const run = await startRun(past.benchId, { title: r.title }, personOf('operator'), at(r.start), tx.db);
    await stopRun(run.id, at(r.end), tx.db);
    for (const n of r.notes) {
      await addNote(run.id, { body: n.body, snapshot: n.snapshot ? await snapshotAt(past.benchId, gateway, at(n.at), tx) : null }, personOf(n.by), at(n.at), tx.db);
    }
    if (r.keep) await setRunKeep(run.id, true, personOf('operator'), tx.db);
  }
}

/** A stored row's bins [i, j) as a count batch, for the live figures. */
function batchOf(row: Omit<Slice, 'channels'> & { counts: number[] }, i: number, j: number): CountBatch {
  const ch = Object.fromEntries(row.keys.map((k, c) => [k, row.counts.slice(c * row.n + i, c * row.n + j)]));
  return { v: 1, boot: DEMO_PAST_BOOT, seq: 0, t0: row.t0 + i * row.dt, dt: row.dt, ch, ...(row.x && { x: row.x.slice(i, j) }), ...(row.cc && { cc: row.cc.slice(i, j) }) };
}

/**
 * The figures the bench page showed at `atMs`: the live service's computation over the recorded
 * bins before it, read second by second over the last few (so the phase has its drift), with the
 * passes fitted in the half hour before (all read inside the recording's transaction).
 */
async function snapshotAt(benchId: string, gatewayId: string, atMs: number, tx: Tx): Promise<BenchFigures | null> {
  const channels = await benchCalibrations(benchId);
  const [bench] = await getDb().select({ cw: benches.coincidenceWindowNs }).from(benches).where(eq(benches.id, benchId)).limit(1);
  const coincidenceWindowNs = bench?.cw ?? DEFAULT_COINCIDENCE_WINDOW_NS;
  const { rows } = await sweepsBetween(benchId, atMs - SWEEP_FRESH_MS, atMs, MAX_SWEEPS, tx.db, 'live');
  const sweepPoints = rows.filter((r) => r.endMs <= atMs).map((r) => ({ timeMs: (r.startMs + r.endMs) / 2, endMs: r.endMs, ...shownVisibility(r) }));
  const recent = new RecentBins();
  const phaseHistory: { t: number; theta: number }[] = [];
  let figures: BenchFigures | null = null;
  const from = atMs - FIGURES_WINDOW_MS;
  const readFrom = atMs - SNAPSHOT_READINGS * 1000;
  for await (const row of gatewayBatches(gatewayId, from, atMs, tx.client)) {
    const at = (t: number) => Math.min(row.n, Math.max(0, (t - row.t0) / row.dt));
    // The window's first part in one piece, then one piece a second, as the service reads it.
    const cuts = [at(from), at(readFrom)];
    for (let t = readFrom + 1000; t <= atMs; t += 1000) cuts.push(at(t));
    for (let k = 1; k < cuts.length; k++) {
      const [i, j] = [cuts[k - 1]!, cuts[k]!];
      if (j <= i) continue;
      recent.add(gatewayId, batchOf(row, i, j), atMs);
      // Figures at whole seconds only: a second split between two rows is read once it is whole.
      const end = row.t0 + j * row.dt;
      if (end <= readFrom || (end - readFrom) % 1000 !== 0) continue;
      const out = computeFigures({ benchId, now: end, windowMs: FIGURES_WINDOW_MS, channels, coincidenceWindowNs, recent, sweepPoints, phaseHistory });
      if (out.phaseReading) phaseHistory.push(out.phaseReading);
      else phaseHistory.length = 0;
      figures = out.figures;
    }
  }
  return figures && { ...figures, coincidenceWindowNs };
}
