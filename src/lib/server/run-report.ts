// Everything a run report shows, loaded in one place: the run, its bench and channels with the
// corrections, the sweeps fitted during it and its notes.
import type { BenchViewData } from '../bench-view.ts';
import type { NoteView, RunView } from '../runs.ts';
import type { ChannelCalibration } from '../channel-calibration.ts';
import { sweepView, sweepsBetween, type SweepView } from './analysis/sweeps-store.ts';
import { benchCalibrations } from './benches.ts';
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
  corrections: ChannelCalibration[];
}

export async function loadRunReport(id: number): Promise<RunReport | null> {
  const run = await getRun(id);
  if (!run) return null;
  const bench = await loadBenchView(run.benchId, { imports: 'include' });
  if (!bench) return null;
  const end = run.endMs ?? Date.now();
  const [rows, notes, corrections] = await Promise.all([sweepsBetween(run.benchId, run.startMs, end), listNotes(id), benchCalibrations(run.benchId)]);
  return { run, bench, sweeps: rows.rows.map(sweepView), sweepsThinnedBy: rows.thinnedBy, sweepCount: rows.total, notes, corrections };
}
