// Fitted sweeps in the database: one row per pass (bench, start, direction), written once.
import { and, asc, desc, eq, gte, inArray, lte, sql } from 'drizzle-orm';
import type { DeadTimeTerm, FringeFit } from '../../analysis/fringe-fit.ts';
import type { Measured } from '../../analysis/measured.ts';
import { meanPeriod, piezoCalibration } from '../../analysis/piezo.ts';
import type { FringeParams } from '../../analysis/fringe-model.ts';
import type { FittedSweepSummary } from '../events.ts';
import { getDb, type Executor } from '../db/index.ts';
import { sweeps } from '../db/schema.ts';
import type { CompletedPass } from './sweep-tracker.ts';

/** What a screen needs to draw the fit over per-bin counts, with amplitudes per raw bin. */
export interface StoredFit extends FringeParams {
  darkPerBin: { a: number; b: number } | null;
  /** τ over one bin of `dtMs` and the model, per output, where the fit saw counts through a dead time. */
  deadTimePerBin: { a: DeadTimeTerm | null; b: DeadTimeTerm | null };
  shown: 'raw' | 'net';
  dtMs: number;
  xMin: number;
  xMax: number;
  outputs: FringeFit['outputs'];
  quality: FringeFit['quality'];
  visibilityInterval: { lower: number; upper: number; method: string };
  /** Phase at the pass's middle `center` (x units): what the pass measures well (pass-phase.ts). */
  phaseAtCenter: Measured;
  center: number;
  /** Mirror travel per volt over this pass, nm/V, for the bench's wavelength and path geometry. */
  piezoNmPerV: Measured | null;
  warnings: string[];
}

export interface BenchOptics {
  wavelengthNm: number;
  /** Optical path change per unit of mirror travel (2 for a retro-reflecting mirror in one arm). */
  pathFactor: number;
}

/** Stores a fitted pass; null when that pass was stored before. */
export async function storeSweep(benchId: string, pass: CompletedPass, fit: FringeFit, optics: BenchOptics | null, db: Executor = getDb()): Promise<{ summary: FittedSweepSummary; fit: StoredFit } | null> {
  const shownV = fit.shown === 'net' && fit.visibilityNet ? fit.visibilityNet : fit.visibility;
  let bins = 0;
  for (const n of pass.binsPerPoint) bins += n;
  const binsPerPoint = bins / pass.binsPerPoint.length;
  // A bin is a point's share: τ over it is binsPerPoint times τ over the point.
  const perBin = (t: DeadTimeTerm | null): DeadTimeTerm | null => t && { tauOver: t.tauOver * binsPerPoint, model: t.model };
  let xMin = Infinity;
  let xMax = -Infinity;
  for (const v of pass.x) {
    if (v < xMin) xMin = v;
    if (v > xMax) xMax = v;
  }
  const passPeriod = xMax > xMin ? meanPeriod(fit, xMin, xMax) : fit.period;
  const stored: StoredFit = {
    amplitudeA: fit.amplitudeA.value / binsPerPoint,
    amplitudeB: fit.amplitudeB.value / binsPerPoint,
    visibility: shownV.value,
    period: fit.period.value,
    phase: fit.phase.value,
    quadratic: fit.quadratic?.value ?? 0,
    darkPerBin: fit.darkPerBin ? { a: fit.darkPerBin.a / binsPerPoint, b: fit.darkPerBin.b / binsPerPoint } : null,
    deadTimePerBin: { a: perBin(fit.deadTime.a), b: perBin(fit.deadTime.b) },
    shown: fit.shown,
    dtMs: pass.dtMs,
    xMin,
    xMax,
    outputs: fit.outputs,
    quality: fit.quality,
    visibilityInterval: { lower: shownV.lower, upper: shownV.upper, method: shownV.method },
    phaseAtCenter: fit.phaseAtCenter,
    center: fit.center,
    piezoNmPerV: optics && xMax > xMin ? piezoCalibration(passPeriod, optics.wavelengthNm, optics.pathFactor) : null,
    warnings: fit.warnings,
  };
  const [row] = await db
    .insert(sweeps)
    .values({
      benchId,
      startMs: pass.startMs,
      endMs: pass.endMs,
      direction: pass.direction,
      visibility: fit.visibility.value,
      visibilityErr: fit.visibility.err,
      visibilityNet: fit.visibilityNet?.value ?? null,
      visibilityNetErr: fit.visibilityNet?.err ?? null,
      phase: fit.phase.value,
      phaseErr: fit.phase.err,
      // The pass's mean period: with the quadratic term, P itself is the slope at x = 0, outside
      // the scan, and up and down passes of one piezo read 10 and 14 V there.
      periodX: passPeriod.value,
      periodXErr: passPeriod.err,
      counts: fit.counts.a + fit.counts.b,
      fit: stored,
    })
    .onConflictDoNothing()
    .returning();
  if (!row) return null;
  return { summary: fittedSummary(row), fit: stored };
}

export function fittedSummary(row: typeof sweeps.$inferSelect): FittedSweepSummary {
  return {
    id: row.id,
    startMs: row.startMs,
    endMs: row.endMs,
    direction: row.direction,
    visibility: row.visibility,
    visibilityErr: row.visibilityErr,
    visibilityNet: row.visibilityNet,
    visibilityNetErr: row.visibilityNetErr,
    phase: row.phase,
    periodX: row.periodX,
    counts: row.counts,
  };
}

/** Most sweeps returned for one range by default: about one per pixel of a wide chart. */
export const MAX_SWEEPS = 2_000;

/** Every pass of the bench, or only those of its own (live) gateways. */
export type SweepSource = 'all' | 'live';

/**
 * Not a pass of an imported recording. Sweeps carry no gateway; a bench's time holds one recording
 * (an import over time with data is refused, DEVELOPERS.md), so a pass within an imported run's
 * span is that import's, and every other pass is the bench's own gateways'.
 */
const notImported = sql`not exists (select 1 from runs r where r.bench_id = ${sweeps.benchId} and r.source = 'import' and r.start_ms < ${sweeps.endMs} and r.end_ms > ${sweeps.startMs})`;

/**
 * The sweeps overlapping [from, to], oldest first. A range holding more than `maxRows` is thinned
 * evenly (every k-th pass, the last one always kept) so a day of fast sweeps stays a small answer
 * spread over the whole range; `thinnedBy` says k and `total` how many there are.
 */
export async function sweepsBetween(benchId: string, fromMs: number, toMs: number, maxRows = MAX_SWEEPS, db: Executor = getDb(), source: SweepSource = 'all') {
  const inRange = and(eq(sweeps.benchId, benchId), gte(sweeps.endMs, fromMs), lte(sweeps.startMs, toMs), source === 'live' ? notImported : undefined);
  const [{ n } = { n: 0 }] = await db.select({ n: sql<number>`count(*)::int` }).from(sweeps).where(inRange);
  const k = Math.max(1, Math.ceil(n / maxRows));
  if (k === 1) return { rows: await db.select().from(sweeps).where(inRange).orderBy(asc(sweeps.startMs)), thinnedBy: 1, total: n };
  const numbered = db
    .select({ id: sweeps.id, rn: sql<number>`row_number() over (order by ${sweeps.startMs})`.as('rn') })
    .from(sweeps)
    .where(inRange)
    .as('numbered');
  // Every k-th counted back from the last: the last is kept and there are at most ⌈n/k⌉ ≤ max.
  const picked = db.select({ id: numbered.id }).from(numbered).where(sql`(${n} - ${numbered.rn}) % ${k} = 0`);
  const rows = await db.select().from(sweeps).where(inArray(sweeps.id, picked)).orderBy(asc(sweeps.startMs));
  return { rows, thinnedBy: k, total: n };
}

/** The latest sweep that ended by `toMs`, or null. */
export async function latestSweep(benchId: string, toMs: number) {
  const [row] = await getDb().select().from(sweeps).where(and(eq(sweeps.benchId, benchId), lte(sweeps.endMs, toMs))).orderBy(desc(sweeps.endMs)).limit(1);
  return row ?? null;
}

/**
 * A stored sweep as the contract's `GET …/sweeps` gives it (and the run report shows it):
 * `visibility`/`visibilityErr` stay the raw fit, as they always were; `visibilityNet` and
 * `visibilityNetErr` are the net fit's, and `shownVisibility` (src/lib/sweep-visibility.ts) picks.
 */
export interface SweepView {
  id: number;
  start: number;
  end: number;
  direction: 'up' | 'down';
  visibility: number;
  visibilityErr: number;
  visibilityNet: number | null;
  visibilityNetErr: number | null;
  phase: number;
  phaseErr: number;
  periodX: number;
  periodXErr: number;
  counts: number;
  fit: unknown;
}

export function sweepView(r: typeof sweeps.$inferSelect): SweepView {
  return {
    id: r.id,
    start: r.startMs,
    end: r.endMs,
    direction: r.direction,
    visibility: r.visibility,
    visibilityErr: r.visibilityErr,
    visibilityNet: r.visibilityNet,
    visibilityNetErr: r.visibilityNetErr,
    phase: r.phase,
    phaseErr: r.phaseErr,
    periodX: r.periodX,
    periodXErr: r.periodXErr,
    counts: r.counts,
    fit: r.fit,
  };
}
