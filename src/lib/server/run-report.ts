// Everything a run report shows, loaded in one place: the run, its bench and channels with the
// corrections, the sweeps fitted during it and its notes.
import type { BenchViewData } from '../bench-view.ts';
import type { NoteView, RunView } from '../runs.ts';
import { sweepsBetween } from './analysis/sweeps-store.ts';
import { loadBenchView } from './bench-view.ts';
import { getDb } from './db/index.ts';
import { channels } from './db/schema.ts';
import { eq } from 'drizzle-orm';
import { getRun, listNotes } from './runs.ts';

export interface ReportSweep {
  id: number;
  start: number;
  end: number;
  direction: 'up' | 'down';
  visibility: number;
  visibilityErr: number;
  visibilityNet: number | null;
  phase: number;
  phaseErr: number;
  periodX: number;
  periodXErr: number;
  counts: number;
  fit: unknown;
}

export interface ReportCorrection {
  channel: string;
  label: string;
  darkRate: number | null;
  darkRateErr: number | null;
  deadTimeNs: number | null;
  deadTimeModel: string;
  efficiency: number;
}

export interface RunReport {
  run: RunView;
  bench: BenchViewData;
  sweeps: ReportSweep[];
  notes: NoteView[];
  corrections: ReportCorrection[];
}

export async function loadRunReport(id: number): Promise<RunReport | null> {
  const run = await getRun(id);
  if (!run) return null;
  const bench = await loadBenchView(run.benchId);
  if (!bench) return null;
  const end = run.endMs ?? Date.now();
  const [rows, notes, cal] = await Promise.all([sweepsBetween(run.benchId, run.startMs, end), listNotes(id), getDb().select().from(channels).where(eq(channels.benchId, run.benchId))]);
  return {
    run,
    bench,
    sweeps: rows.map((r) => ({
      id: r.id,
      start: r.startMs,
      end: r.endMs,
      direction: r.direction,
      visibility: r.visibility,
      visibilityErr: r.visibilityErr,
      visibilityNet: r.visibilityNet,
      phase: r.phase,
      phaseErr: r.phaseErr,
      periodX: r.periodX,
      periodXErr: r.periodXErr,
      counts: r.counts,
      fit: r.fit,
    })),
    notes,
    corrections: bench.channels.map((c) => {
      const row = cal.find((r) => r.gatewayId === c.gateway && r.key === c.key);
      return {
        channel: c.id,
        label: c.label,
        darkRate: row?.darkRate ?? null,
        darkRateErr: row?.darkRateErr ?? null,
        deadTimeNs: row?.deadTimeNs ?? null,
        deadTimeModel: row?.deadTimeModel ?? 'nonparalyzable',
        efficiency: row?.efficiency ?? 1,
      };
    }),
  };
}
