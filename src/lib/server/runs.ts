// Runs (a titled span of a bench's time) and their timestamped notes. One active run per bench:
// the partial unique index runs_one_active_idx refuses a second, and we turn that into a 409. The
// writing functions take an optional `db`, a transaction their caller holds (the demo's recorded
// past commits a bench's runs with its bins, or nothing).
import { and, asc, count, desc, eq, inArray, isNull } from 'drizzle-orm';
import { getDb, type Db, type Executor } from './db/index.ts';
import { isUniqueViolation } from './db/unique-violation.ts';
import { benches, notes, runs, users } from './db/schema.ts';
import { HttpError } from './http/responses.ts';
import { runtime } from './runtime.ts';
import { recordAudit } from './audit.ts';
import type { AddNoteBody, NoteView, RunView, StartRunBody } from '../runs.ts';
import { benchFiguresSchema } from '../bench-figures-schema.ts';

function person(id: string | null, name: string | null, email: string | null): { id: string; name: string } | null {
  return id ? { id, name: name || email || id } : null;
}

const runColumns = {
  id: runs.id,
  benchId: runs.benchId,
  title: runs.title,
  startMs: runs.startMs,
  endMs: runs.endMs,
  keep: runs.keep,
  source: runs.source,
  userId: users.id,
  userName: users.name,
  userEmail: users.email,
};

type RunRow = { id: number; benchId: string; title: string; startMs: number; endMs: number | null; keep: boolean; source: 'live' | 'import'; userId: string | null; userName: string | null; userEmail: string | null };

async function noteCounts(runIds: number[], db: Executor): Promise<Map<number, number>> {
  if (runIds.length === 0) return new Map();
  const rows = await db.select({ runId: notes.runId, n: count() }).from(notes).where(inArray(notes.runId, runIds)).groupBy(notes.runId);
  return new Map(rows.map((r) => [r.runId, r.n]));
}

async function toViews(rows: RunRow[], db: Executor = getDb()): Promise<RunView[]> {
  const counts = await noteCounts(rows.map((r) => r.id), db);
  return rows.map((r) => ({
    id: r.id,
    benchId: r.benchId,
    title: r.title,
    startMs: r.startMs,
    endMs: r.endMs,
    startedBy: person(r.userId, r.userName, r.userEmail),
    noteCount: counts.get(r.id) ?? 0,
    keep: r.keep,
    imported: r.source === 'import',
  }));
}

/** Runs newest first; of one bench when given. */
export async function listRuns(opts: { benchId?: string; limit?: number } = {}): Promise<RunView[]> {
  const rows = await getDb()
    .select(runColumns)
    .from(runs)
    .leftJoin(users, eq(users.id, runs.startedBy))
    .where(opts.benchId ? eq(runs.benchId, opts.benchId) : undefined)
    .orderBy(desc(runs.startMs), desc(runs.id))
    .limit(opts.limit ?? 500);
  return await toViews(rows);
}

export async function getRun(id: number, db: Executor = getDb()): Promise<RunView | null> {
  const rows = await db.select(runColumns).from(runs).leftJoin(users, eq(users.id, runs.startedBy)).where(eq(runs.id, id)).limit(1);
  return (await toViews(rows, db))[0] ?? null;
}

/** The active run of each bench (at most one each), keyed by bench id. */
export async function activeRuns(): Promise<Map<string, RunView>> {
  const rows = await getDb().select(runColumns).from(runs).leftJoin(users, eq(users.id, runs.startedBy)).where(isNull(runs.endMs));
  return new Map((await toViews(rows)).map((r) => [r.benchId, r]));
}

export async function startRun(benchId: string, body: StartRunBody, userId: string, now = Date.now(), db: Executor = getDb()): Promise<RunView> {
  const [bench] = await db.select({ id: benches.id }).from(benches).where(eq(benches.id, benchId)).limit(1);
  if (!bench) throw new HttpError(404, `no bench "${benchId}"`);
  try {
    const [row] = await db.insert(runs).values({ benchId, title: body.title, startMs: now, startedBy: userId }).returning({ id: runs.id });
    const run = (await getRun(row!.id, db))!;
    publishRun(run);
    return run;
  } catch (err) {
    if (isUniqueViolation(err, 'runs_one_active_idx')) throw new HttpError(409, 'this bench already has an active run: stop it first');
    throw err;
  }
}

export async function stopRun(id: number, now = Date.now(), db: Executor = getDb()): Promise<RunView> {
  const [row] = await db
    .update(runs)
    .set({ endMs: now })
    .where(and(eq(runs.id, id), isNull(runs.endMs)))
    .returning({ id: runs.id });
  if (!row) {
    const run = await getRun(id, db);
    if (!run) throw new HttpError(404, `no run ${id}`);
    throw new HttpError(409, 'this run has already stopped');
  }
  const run = (await getRun(id, db))!;
  publishRun(run);
  return run;
}

/** Pushes a run's start or stop to the bench's live clients when the hub runs in this process. */
function publishRun(run: RunView): void {
  runtime().live?.publish(run.benchId, { type: 'run', bench: run.benchId, run });
}

/** Marks a run to be spared by retention, or no longer; recorded in the audit trail. */
export async function setRunKeep(id: number, keep: boolean, userId: string, db?: Executor): Promise<RunView> {
  // The change and its audit row commit together, as every audited change does: in the caller's transaction, or one of their own.
  const change = async (tx: Pick<Db, 'select' | 'update' | 'insert'>) => {
    const [before] = await tx.select({ keep: runs.keep }).from(runs).where(eq(runs.id, id)).for('update');
    if (!before) throw new HttpError(404, `no run ${id}`);
    await tx.update(runs).set({ keep }).where(eq(runs.id, id));
    await recordAudit({ actorId: userId, entity: 'run', entityId: String(id), action: keep ? 'keep' : 'unkeep', before, after: { keep } }, tx);
  };
  await (db ? change(db) : getDb().transaction(change));
  return (await getRun(id, db))!;
}

export async function listNotes(runId: number, db: Executor = getDb()): Promise<NoteView[]> {
  const rows = await db
    .select({ id: notes.id, runId: notes.runId, atMs: notes.atMs, body: notes.body, snapshot: notes.snapshot, userId: users.id, userName: users.name, userEmail: users.email })
    .from(notes)
    .leftJoin(users, eq(users.id, notes.authorId))
    .where(eq(notes.runId, runId))
    .orderBy(asc(notes.atMs), asc(notes.id));
  return rows.map((r) => {
    // Stored snapshots were validated on the way in; re-parse so an old shape reads as "none" not a crash.
    const snap = r.snapshot == null ? null : benchFiguresSchema.safeParse(r.snapshot);
    return { id: r.id, runId: r.runId, atMs: r.atMs, body: r.body, author: person(r.userId, r.userName, r.userEmail), snapshot: snap?.success ? snap.data : null };
  });
}

/**
 * A note into a run, active or stopped: a stopped run's record takes later notes (what the analysis
 * showed, a fault found afterwards), each with its own time after the run's end.
 */
export async function addNote(runId: number, body: AddNoteBody, userId: string, now = Date.now(), db: Executor = getDb()): Promise<NoteView> {
  const run = await getRun(runId, db);
  if (!run) throw new HttpError(404, `no run ${runId}`);
  if (body.snapshot && body.snapshot.benchId !== run.benchId) throw new HttpError(422, 'snapshot: figures of another bench');
  const [row] = await db
    .insert(notes)
    .values({ runId, authorId: userId, atMs: now, body: body.body, snapshot: body.snapshot ?? null })
    .returning({ id: notes.id });
  const all = await listNotes(runId, db);
  const note = all.find((n) => n.id === row!.id)!;
  runtime().live?.publish(run.benchId, { type: 'note', bench: run.benchId, note });
  return note;
}
