// The physics off the ingest path: listens to stored batches, hands completed sweep passes to the
// fitter (a worker thread), stores and announces the fits, and computes each bench's live figures
// once a second. A slow fit never delays storing or pushing counts.
import { and, eq, gt, gte, lte, max, min } from 'drizzle-orm';
import { correctDeadTime } from '../../analysis/dead-time.ts';
import type { DeadTimeTerm, FringeFitOptions, FringeFitResult } from '../../analysis/fringe-fit.ts';
import type { BenchFigures } from '../../bench-figures.ts';
import { channelDeadTime } from '../../channel-calibration.ts';
import { DEFAULT_COINCIDENCE_WINDOW_NS } from '../../coincidence-window.ts';
import type { CountBatch } from '../../contract/wire.ts';
import { shownVisibility } from '../../sweep-visibility.ts';
import { benchCalibrations } from '../benches.ts';
import { getDb, inTransaction, type Executor, type Tx } from '../db/index.ts';
import { benches, channels as channelsTable, sweeps as sweepsTable } from '../db/schema.ts';
import { serverEvents } from '../events.ts';
import { computeFigures, SWEEP_FRESH_MS, type ChannelSettings, type SweepPoint } from './live-figures.ts';
import { RecentBins } from './recent-bins.ts';
import { storedWindow } from './stored-window.ts';
import { SweepTracker, type CompletedPass } from './sweep-tracker.ts';
import { fittedSummary, MAX_SWEEPS, sweepsBetween, storeSweep, type StoredFit } from './sweeps-store.ts';
import { gatewayBatches } from '../export/export.ts';
import { joinSpans } from '../../spans.ts';

/** `exposure`: each point's bins over the pass's mean bins per point (see FringeData). */
export type FitFn = (pass: { x: Float64Array; a: Float64Array; b: Float64Array; exposure: Float64Array }, options: FringeFitOptions) => Promise<FringeFitResult>;
export type Publish = (benchId: string, message: { type: string; bench: string; [k: string]: unknown }) => void;

interface BenchState {
  tracker: SweepTracker;
  recent: RecentBins;
  settings: { channels: ChannelSettings[]; coincidenceWindowNs: number; loadedAt: number } | null;
  sweepPoints: SweepPoint[];
  phaseHistory: { t: number; theta: number }[];
  figures: BenchFigures | null;
  lastBatchAt: number;
  /** Batches queued for the sweep tracker, in arrival order. */
  tracking: Promise<void>;
  fitting: Promise<void>;
  /** Spans of late batches per gateway, [from, to) ms, waiting for their refit. */
  late: Map<string, [number, number][]>;
  lateTimer: NodeJS.Timeout | null;
}

/**
 * Bench and channel settings are re-read this often, ms, and at once when the admin pages announce
 * a change ('bench-settings-changed'); the period covers changes made outside them (SQL, a second
 * instance).
 */
const SETTINGS_TTL_MS = 10_000;
/** Figures are recomputed this often per active bench, ms. */
const FIGURES_EVERY_MS = 1_000;
/** Phase readings kept for the drift rate, s. */
const PHASE_HISTORY_S = 60;
/** Live window for rates and photon statistics, ms. */
export const FIGURES_WINDOW_MS = 10_000;
/** Quiet after the last late batch before its span is refitted, ms: a burst of them refits once. */
const LATE_QUIET_MS = 2_000;
/**
 * Furthest back a refit reaches for the pass a late span belongs to, ms, when no stored sweep ends
 * before it: ten minutes, the length of the longest pass the tracker keeps at 1 ms bins.
 */
const LATE_LOOKBACK_MS = 600_000;

export interface AnalysisService {
  figures(benchId: string): BenchFigures | null;
  /**
   * Fits the sweeps in one gateway's stored bins of [fromMs, toMs) (an imported run, the range
   * around a late span); resolves with how many were stored. `within`: read the bins and store the fits inside that transaction (the demo's past).
   */
  fitStored(benchId: string, gatewayId: string, fromMs: number, toMs: number, within?: Tx): Promise<number>;
  close(): void;
}

export function startAnalysis(opts: { fit: FitFn; publish: Publish; lateQuietMs?: number }): AnalysisService {
  const lateQuietMs = opts.lateQuietMs ?? LATE_QUIET_MS;
  const states = new Map<string, BenchState>();
  let closed = false;
  const state = (benchId: string): BenchState => {
    let s = states.get(benchId);
    if (!s) {
      s = { tracker: new SweepTracker(), recent: new RecentBins(), settings: null, sweepPoints: [], phaseHistory: [], figures: null, lastBatchAt: 0, tracking: Promise.resolve(), fitting: Promise.resolve(), late: new Map(), lateTimer: null };
      states.set(benchId, s);
      void loadRecentSweeps(benchId, s);
    }
    return s;
  };

  async function settingsFor(benchId: string, s: BenchState) {
    if (s.settings && Date.now() - s.settings.loadedAt < SETTINGS_TTL_MS) return s.settings;
    const [bench] = await getDb().select({ cw: benches.coincidenceWindowNs }).from(benches).where(eq(benches.id, benchId)).limit(1);
    const channels = await benchCalibrations(benchId);
    s.settings = { channels, coincidenceWindowNs: bench?.cw ?? DEFAULT_COINCIDENCE_WINDOW_NS, loadedAt: Date.now() };
    return s.settings;
  }

  async function loadRecentSweeps(benchId: string, s: BenchState) {
    const now = Date.now();
    // The bench's own passes only: an imported recording's are no reading of the bench as it is.
    const { rows } = await sweepsBetween(benchId, now - SWEEP_FRESH_MS, now, MAX_SWEEPS, getDb(), 'live').catch(() => ({ rows: [] }));
    for (const r of rows.slice(-8)) s.sweepPoints.push({ timeMs: (r.startMs + r.endMs) / 2, endMs: r.endMs, ...shownVisibility(r) });
  }

  /** Fits one pass with the outputs' dark calibration and stores it; null when the fit failed or the pass was stored before. */
  async function fitPass(benchId: string, pass: CompletedPass, outA: ChannelSettings | undefined, outB: ChannelSettings | undefined, db: Executor = getDb()) {
    const [optics] = await db.select({ wavelengthNm: benches.wavelengthNm, pathFactor: benches.pathFactor }).from(benches).where(eq(benches.id, benchId)).limit(1);
    let meanBins = 0;
    for (const n of pass.binsPerPoint) meanBins += n;
    meanBins /= pass.binsPerPoint.length;
    const binS = (pass.dtMs / 1000) * meanBins;
    // With a dead time set the fit models true counts through it, so its darks are true ones too.
    const dead = (c: ChannelSettings | undefined): DeadTimeTerm | null => {
      const dt = c ? channelDeadTime(c) : null;
      return dt && { tauOver: dt.tau / binS, model: dt.model };
    };
    const trueDark = (c: ChannelSettings, t: DeadTimeTerm | null) => {
      if (!t || c.darkRate === null) return c.darkRate;
      const r = correctDeadTime({ value: c.darkRate, err: 0 }, t.tauOver * binS, t.model);
      return r.ok ? r.rate.value : c.darkRate;
    };
    const [dtA, dtB] = [dead(outA), dead(outB)];
    const darkA = outA ? trueDark(outA, dtA) : null;
    const darkB = outB ? trueDark(outB, dtB) : null;
    const options: FringeFitOptions = {
      ...(darkA != null ? { darkA: darkA * binS } : {}),
      ...(darkB != null ? { darkB: darkB * binS } : {}),
      ...(dtA ? { deadTimeA: dtA } : {}),
      ...(dtB ? { deadTimeB: dtB } : {}),
      // Piezos are nonlinear (common practice): the linear model fails the goodness of fit on
      // full-stroke sweeps, while the quadratic term costs one parameter.
      quadratic: true,
    };
    // Points sum unequal numbers of bins (a dwell no whole number of bins, the grouping past 2,000
    // points): the fit scales each point's expected counts by its share.
    const exposure = pass.binsPerPoint.map((n) => n / meanBins);
    const result = await opts.fit({ x: pass.x, a: pass.a, b: pass.b, exposure }, options);
    if (!result.ok) return null;
    return await storeSweep(benchId, pass, result, optics ?? null, db);
  }

  async function fitAndStore(benchId: string, s: BenchState, pass: CompletedPass, settings: { channels: ChannelSettings[] }) {
    const fitted = await fitPass(benchId, pass, settings.channels.find((c) => c.role === 'out_a'), settings.channels.find((c) => c.role === 'out_b'));
    if (!fitted) return;
    const { summary, fit } = fitted;
    s.sweepPoints.push({ timeMs: (pass.startMs + pass.endMs) / 2, endMs: pass.endMs, ...shownVisibility(summary) });
    if (s.sweepPoints.length > 32) s.sweepPoints.splice(0, s.sweepPoints.length - 32);
    serverEvents().emit('sweep-fitted', { benchId, sweep: summary });
    opts.publish(benchId, { type: 'sweep', bench: benchId, sweep: { ...summary, fit } });
  }

  async function fitStored(benchId: string, gatewayId: string, fromMs: number, toMs: number, within?: Tx): Promise<number> {
    const db = within?.db ?? getDb();
    const rows = await db.select().from(channelsTable).where(eq(channelsTable.gatewayId, gatewayId));
    const keys = rows.map((r) => r.key).sort();
    // Explicit roles where the file carried them; otherwise the contract's default, the first two keys.
    const keyA = rows.find((r) => r.role === 'out_a')?.key ?? keys[0];
    const keyB = rows.find((r) => r.role === 'out_b')?.key ?? keys.find((k) => k !== keyA);
    if (!keyA || !keyB) return 0;
    const settingsOf = (key: string): ChannelSettings => {
      const r = rows.find((c) => c.key === key);
      return { gateway: gatewayId, key, label: r?.label ?? key, role: key === keyA ? 'out_a' : 'out_b', darkRate: r?.darkRate ?? null, darkRateErr: r?.darkRateErr ?? null, deadTimeNs: r?.deadTimeNs ?? null, deadTimeModel: r?.deadTimeModel ?? 'nonparalyzable', efficiency: r?.efficiency ?? 1 };
    };
    const tracker = new SweepTracker();
    const passes: CompletedPass[] = [];
    for await (const b of gatewayBatches(gatewayId, fromMs, toMs, within?.client)) {
      const ia = b.keys.indexOf(keyA);
      const ib = b.keys.indexOf(keyB);
      if (ia < 0 || ib < 0 || !b.x) continue;
      // Stored rows hold whole (merged) batches: only the range's bins, so a refit of a late span
      // starts and ends at the pass boundaries it was given.
      const i0 = Math.max(0, Math.ceil((fromMs - b.t0) / b.dt));
      const i1 = Math.min(b.n, Math.ceil((toMs - b.t0) / b.dt));
      if (i1 <= i0) continue;
      passes.push(...tracker.push(b.t0 + i0 * b.dt, b.dt, b.x.slice(i0, i1), b.counts.slice(ia * b.n + i0, ia * b.n + i1), b.counts.slice(ib * b.n + i0, ib * b.n + i1)));
    }
    passes.push(...tracker.flush());
    let stored = 0;
    for (const pass of passes) if (await fitPass(benchId, pass, settingsOf(keyA), settingsOf(keyB), db)) stored++;
    return stored;
  }

  /** Notes a late batch's span and (re)starts the quiet period before its refit. */
  function noteLate(benchId: string, s: BenchState, gatewayId: string, fromMs: number, toMs: number) {
    const spans = s.late.get(gatewayId) ?? [];
    spans.push([fromMs, toMs]);
    s.late.set(gatewayId, spans);
    armLateRefit(benchId, s);
  }

  function armLateRefit(benchId: string, s: BenchState) {
    if (s.lateTimer) clearTimeout(s.lateTimer);
    s.lateTimer = setTimeout(() => {
      s.lateTimer = null;
      // On the fitting chain: the live passes completed before it are stored first, so the refit
      // replaces them instead of racing them.
      s.fitting = s.fitting.then(() => refitLate(benchId, s)).catch((err: unknown) => console.warn('[refit]', benchId, err instanceof Error ? err.message : err));
    }, lateQuietMs);
    s.lateTimer.unref();
  }

  /**
   * Refits the stored range around each late span the tracker has moved past. A span that ends
   * where the tracker still holds bins waits: the pass under way there (restarted at the gap the
   * late batch left) is the live tracker's until it completes, and the refit then replaces it.
   */
  async function refitLate(benchId: string, s: BenchState) {
    const heldFrom = s.tracker.heldFrom;
    for (const [gatewayId, spans] of [...s.late]) {
      const ready = spans.filter(([, to]) => to < heldFrom);
      const waiting = spans.filter(([, to]) => to >= heldFrom);
      if (waiting.length > 0) s.late.set(gatewayId, waiting);
      else s.late.delete(gatewayId);
      // A burst of late batches is mostly contiguous: one range query per run of them, not per batch.
      const ranges: [number, number][] = [];
      for (const [lateFrom, lateTo] of joinSpans(ready)) ranges.push(await refitRange(benchId, lateFrom, lateTo, heldFrom));
      for (const [fromMs, toMs] of joinSpans(ranges)) await replaceSweeps(benchId, s, gatewayId, fromMs, toMs);
    }
    if (s.late.size > 0) armLateRefit(benchId, s);
  }

  /**
   * From the end of the last stored sweep before the late span (a pass boundary: the tracker
   * restarts there as it did live) to the end of the first one after it, never into what the
   * tracker still holds.
   */
  async function refitRange(benchId: string, lateFrom: number, lateTo: number, heldFrom: number): Promise<[number, number]> {
    const db = getDb();
    const [before] = await db.select({ end: max(sweepsTable.endMs) }).from(sweepsTable).where(and(eq(sweepsTable.benchId, benchId), lte(sweepsTable.endMs, lateFrom)));
    const [after] = await db.select({ end: min(sweepsTable.endMs) }).from(sweepsTable).where(and(eq(sweepsTable.benchId, benchId), gt(sweepsTable.endMs, lateTo)));
    return [Math.max(before?.end ?? -Infinity, lateFrom - LATE_LOOKBACK_MS), Math.min(after?.end ?? Infinity, heldFrom)];
  }

  /**
   * One transaction: every sweep wholly inside [from, to] goes (the partial passes the gap cut, and
   * whole ones, which the refit stores again as they were), then the range's passes are fitted from
   * the stored bins. The bench's clients hear which sweeps went, then the new ones.
   */
  async function replaceSweeps(benchId: string, s: BenchState, gatewayId: string, fromMs: number, toMs: number) {
    const inRange = and(eq(sweepsTable.benchId, benchId), gte(sweepsTable.startMs, fromMs), lte(sweepsTable.endMs, toMs));
    const { removed, added } = await inTransaction(async (_client, tx) => {
      const removed = (await tx.db.delete(sweepsTable).where(inRange).returning({ id: sweepsTable.id })).map((r) => r.id);
      await fitStored(benchId, gatewayId, fromMs, toMs, tx);
      const added = await tx.db.select().from(sweepsTable).where(inRange).orderBy(sweepsTable.startMs);
      return { removed, added };
    });
    s.sweepPoints = s.sweepPoints.filter((p) => p.timeMs < fromMs || p.timeMs > toMs);
    for (const r of added) s.sweepPoints.push({ timeMs: (r.startMs + r.endMs) / 2, endMs: r.endMs, ...shownVisibility(r) });
    s.sweepPoints.sort((p, q) => p.timeMs - q.timeMs);
    if (s.sweepPoints.length > 32) s.sweepPoints.splice(0, s.sweepPoints.length - 32);
    if (removed.length > 0) opts.publish(benchId, { type: 'sweeps-replaced', bench: benchId, from: fromMs, to: toMs, ids: removed });
    for (const r of added) opts.publish(benchId, { type: 'sweep', bench: benchId, sweep: { ...fittedSummary(r), fit: r.fit as StoredFit } });
  }

  const onBatch = ({ benchId, gatewayId, batch }: { benchId: string; gatewayId: string; batch: CountBatch }) => {
    const s = state(benchId);
    s.recent.add(gatewayId, batch);
    s.lastBatchAt = Date.now();
    // Batches go through the tracker in arrival order: a settings reload must not let a later
    // batch overtake an earlier one (the tracker would see a gap and drop the pass under way).
    s.tracking = s.tracking
      .then(() => settingsFor(benchId, s))
      .then((settings) => {
        const outA = settings.channels.find((c) => c.role === 'out_a');
        const outB = settings.channels.find((c) => c.role === 'out_b');
        if (!outA || !outB || outA.gateway !== gatewayId || outB.gateway !== gatewayId || !batch.x) return;
        const a = Object.hasOwn(batch.ch, outA.key) ? batch.ch[outA.key] : undefined;
        const b = Object.hasOwn(batch.ch, outB.key) ? batch.ch[outB.key] : undefined;
        if (!a || !b) return;
        // Behind the tracker (a late batch): it goes on with the pass under way, and the span is
        // refitted from storage once the late batches stop coming.
        if (batch.t0 < s.tracker.seenUntil) {
          noteLate(benchId, s, gatewayId, batch.t0, batch.t0 + a.length * batch.dt);
          return;
        }
        // Fits run one after another per bench, so sweeps are stored in order.
        for (const pass of s.tracker.push(batch.t0, batch.dt, batch.x, a, b)) {
          s.fitting = s.fitting.then(() => fitAndStore(benchId, s, pass, settings)).catch((err: unknown) => console.warn('[fit]', benchId, err instanceof Error ? err.message : err));
        }
      })
      .catch((err: unknown) => console.warn('[analysis]', err instanceof Error ? err.message : err));
  };
  serverEvents().on('batch-stored', onBatch);

  /**
   * Fills each bench's recent bins from the rows stored over the last window, so the figures after
   * a restart read the window the server held before it instead of starting blank and filling over
   * FIGURES_WINDOW_MS. Subscribed first: a batch announced during the read is held once whichever
   * comes first (RecentBins.preload). The window counts as just arrived, so its figures are computed
   * once the bench's settings are read. A failure only costs that head start.
   */
  async function warmUp() {
    const now = Date.now();
    const stored = await storedWindow(now - FIGURES_WINDOW_MS, now);
    if (closed) return;
    for (const [benchId, byGateway] of stored) {
      const s = state(benchId);
      for (const [gatewayId, batches] of byGateway) s.recent.preload(gatewayId, batches, now);
      s.lastBatchAt = Math.max(s.lastBatchAt, now);
      s.tracking = s.tracking.then(() => settingsFor(benchId, s)).then(() => undefined, (err: unknown) => console.warn('[analysis]', err instanceof Error ? err.message : err));
    }
  }
  void warmUp().catch((err: unknown) => console.warn('[analysis] recent bins not read back:', err instanceof Error ? err.message : err));

  // Reloaded on the tracking chain, so the reload cannot race a batch's own (older) read.
  const onSettingsChanged = ({ benchId }: { benchId: string }) => {
    const s = states.get(benchId);
    if (!s) return;
    if (s.settings) s.settings.loadedAt = -Infinity;
    s.tracking = s.tracking.then(() => settingsFor(benchId, s)).then(() => undefined, (err: unknown) => console.warn('[analysis]', err instanceof Error ? err.message : err));
  };
  serverEvents().on('bench-settings-changed', onSettingsChanged);

  const timer = setInterval(() => {
    const now = Date.now();
    for (const [benchId, s] of states) {
      if (now - s.lastBatchAt > 5_000 || !s.settings) continue;
      // One bench's odd data must neither stop the others' figures nor, from a timer, the server.
      let computed: ReturnType<typeof computeFigures>;
      try {
        computed = computeFigures({
        benchId,
        now,
        windowMs: FIGURES_WINDOW_MS,
        channels: s.settings.channels,
        coincidenceWindowNs: s.settings.coincidenceWindowNs,
        recent: s.recent,
        sweepPoints: s.sweepPoints,
        phaseHistory: s.phaseHistory,
        });
      } catch (err) {
        console.warn('[figures]', benchId, err instanceof Error ? err.message : err);
        continue;
      }
      const { figures, phaseReading } = computed;
      if (phaseReading) {
        s.phaseHistory.push(phaseReading);
        while (s.phaseHistory.length > 0 && phaseReading.t - (s.phaseHistory[0]?.t ?? 0) > PHASE_HISTORY_S) s.phaseHistory.shift();
        if (figures.phase) serverEvents().emit('phase-update', { benchId, at: figures.at, phase: figures.phase.value, driftRadPerS: figures.phase.driftRadPerS });
      } else {
        s.phaseHistory.length = 0;
      }
      // Said beside g2(0), so a reader can tell which window its accidentals assumed.
      s.figures = { ...figures, coincidenceWindowNs: s.settings.coincidenceWindowNs };
      opts.publish(benchId, { type: 'figures', bench: benchId, figures: s.figures });
    }
  }, FIGURES_EVERY_MS);
  timer.unref();

  return {
    figures: (benchId) => states.get(benchId)?.figures ?? null,
    fitStored,
    close: () => {
      closed = true;
      clearInterval(timer);
      for (const s of states.values()) if (s.lateTimer) clearTimeout(s.lateTimer);
      serverEvents().off('batch-stored', onBatch);
      serverEvents().off('bench-settings-changed', onSettingsChanged);
    },
  };
}
