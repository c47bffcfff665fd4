// Everything a run report shows, loaded in one place: the run, its bench and channels with the
// corrections, the sweeps fitted during it and its notes.
import type { BenchViewData, ViewChannel } from '../bench-view.ts';
import type { NoteView, RunView } from '../runs.ts';
import type { ChannelCalibration } from '../channel-calibration.ts';
import { sweepView, sweepsBetween, type SweepView } from './analysis/sweeps-store.ts';
import { calibrationsWithData } from './benches.ts';
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
}

export async function loadRunReport(id: number): Promise<RunReport | null> {
  const run = await getRun(id);
  if (!run) return null;
  const bench = await loadBenchView(run.benchId, { imports: 'include' });
  if (!bench) return null;
  const end = run.endMs ?? Date.now();
  const [rows, notes, corrections] = await Promise.all([sweepsBetween(run.benchId, run.startMs, end), listNotes(id), calibrationsWithData(run.benchId, run.startMs, end, run.id)]);
  const channels = corrections.map((c) => ({ id: `${c.gateway}/${c.key}`, gateway: c.gateway, key: c.key, label: c.label, role: c.role, darkRate: c.darkRate, deadTimeNs: c.deadTimeNs }));
  return { run, bench, sweeps: rows.rows.map(sweepView), sweepsThinnedBy: rows.thinnedBy, sweepCount: rows.total, notes, channels, corrections };
}
