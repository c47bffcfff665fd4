// Everything a run report shows, loaded in one place: the run, its bench and channels with the
// corrections, the sweeps fitted during it, its notes, its stability over the holds (as the
// history computes it) and its photon statistics.
import type { BenchViewData, ViewChannel } from '../bench-view.ts';
import type { NoteView, RunView } from '../runs.ts';
import type { ChannelCalibration } from '../channel-calibration.ts';
import type { Stability } from '../stability.ts';
import { pickStep } from '../time-steps.ts';
import { DEFAULT_COINCIDENCE_WINDOW_NS } from '../coincidence-window.ts';
import { runPhotonStats, type RunPhotonStats } from './analysis/run-photon-stats.ts';
import { benchStability } from './analysis/stability.ts';
import { sweepView, sweepsBetween, type SweepView } from './analysis/sweeps-store.ts';
import { calibrationsWithData, getBench } from './benches.ts';
import { MAX_RAW_SPAN_MS } from './counts-query.ts';
import { getDbHandle } from './db/index.ts';
import { loadBenchView } from './bench-view.ts';
import { getRun, listNotes } from './runs.ts';

export interface RunReport {
  run: RunView;
  bench: BenchViewData;
  sweeps: SweepView[];
  /** Every k-th sweep is listed when the run holds more than the report shows. */
  sweepsThinnedBy: number;
  sweepCount: number;
  notes: NoteView[];
  /**
   * The channels with bins in the run, in role order. An imported run's own outputs take the roles
   * A and B (as its fit does), so they are drawn as outputs, not as other recordings' channels.
   */
  channels: ViewChannel[];
  corrections: ChannelCalibration[];
  /** Allan deviations of the outputs' rates and the phase over the run's holds, as the history computes them (finer buckets). */
  stability: Stability;
  /** Null where no raw bin of the run is left (past raw retention). */
  photonStats: RunPhotonStats | null;
}

/**
 * Buckets a run's stability is read in: ten times the history's 2000, since a report is computed
 * once (and printed) where the history reads again on every zoom. At 100–200 ms for a run of an
 * hour or less the phase's counting-noise floor shows at short τ, below the drift that the
 * history's 2 s buckets of such a run see only. Whole seconds where the counts API reads rollups.
 */
const REPORT_STABILITY_POINTS = 20_000;

async function reportStabilityStep(gateways: string[], from: number, to: number): Promise<number> {
  const step = pickStep(to - from, REPORT_STABILITY_POINTS);
  if (step % 1_000 === 0) return step;
  // Steps below whole seconds are read from raw bins: past their retention only the rollups are left.
  // They must be a multiple of the bins' width (the counts API refuses others): an imported run of
  // 1 s bins is read at whole seconds. One probe per gateway; a gateway keeps its bin width.
  const { rows } = await getDbHandle().pool.query<{ dt: number | null }>(
    `select max(c.dt)::int as dt from unnest($1::text[]) as g(id)
       cross join lateral (select dt from count_batches where gateway_id = g.id and t0 < $3 and t1 > $2 limit 1) c`,
    [gateways, from, to],
  );
  const dt = rows[0]?.dt ?? null;
  if (to - from > MAX_RAW_SPAN_MS || dt === null) return Math.max(1_000, step);
  return Math.ceil(step / dt) * dt;
}

export async function loadRunReport(id: number): Promise<RunReport | null> {
  const run = await getRun(id);
  if (!run) return null;
  const bench = await loadBenchView(run.benchId, { imports: 'include' });
  if (!bench) return null;
  const end = run.endMs ?? Date.now();
  const [rows, notes, corrections, benchRow] = await Promise.all([sweepsBetween(run.benchId, run.startMs, end), listNotes(id), calibrationsWithData(run.benchId, run.startMs, end, run.id), getBench(run.benchId)]);
  const channels = corrections.map((c) => ({ id: `${c.gateway}/${c.key}`, gateway: c.gateway, key: c.key, label: c.label, role: c.role, darkRate: c.darkRate, deadTimeNs: c.deadTimeNs }));
  const [stability, photonStats] = await Promise.all([
    reportStabilityStep([...new Set(corrections.map((c) => c.gateway))], run.startMs, end).then((step) => benchStability(run.benchId, run.startMs, end, step, { channels: corrections })),
    runPhotonStats(corrections, run.startMs, end, benchRow?.coincidenceWindowNs ?? DEFAULT_COINCIDENCE_WINDOW_NS),
  ]);
  return { run, bench, sweeps: rows.rows.map(sweepView), sweepsThinnedBy: rows.thinnedBy, sweepCount: rows.total, notes, channels, corrections, stability, photonStats };
}
