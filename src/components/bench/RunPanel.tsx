// The bench's active run: start one with a title, stop it, and take timestamped notes during it,
// optionally with a snapshot of the figures on screen. Observers read the notes only.
import { useEffect, useRef, useState, type FormEvent } from 'react';
import type { BenchFigures } from '../../lib/bench-figures.ts';
import { addNote, errorText, fetchNotes, startRun, stopRun } from '../../lib/client/api.ts';
import { askToConfirm } from '../../lib/client/confirm-dialog.ts';
import { confirmStopRun } from '../../lib/confirmations.ts';
import { formatDuration, snapshotLines } from '../../lib/client/format.ts';
import { LocalTime } from '../LocalTime.tsx';
import { useNow } from '../../lib/client/use-now.ts';
import type { NoteView, RunView } from '../../lib/runs.ts';

/** A run started or stopped, or a note added, as pushed to everyone on the bench page; `seq` orders them. */
export type RunPush = { seq: number } & ({ run: RunView } | { note: NoteView });

interface Props {
  benchId: string;
  initialRun: RunView | null;
  canOperate: boolean;
  figures: BenchFigures | null;
  /** Pushes so far, oldest first; the panel applies those it has not seen. */
  pushed: RunPush[];
}

export function RunPanel({ benchId, initialRun, canOperate, figures, pushed }: Props) {
  const [run, setRun] = useState<RunView | null>(initialRun);
  const [notes, setNotes] = useState<NoteView[] | null>(null);
  const [notesError, setNotesError] = useState<string | null>(null);
  const [title, setTitle] = useState('');
  const [text, setText] = useState('');
  const [withSnapshot, setWithSnapshot] = useState(true);
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  const now = useNow(1000);

  useEffect(() => {
    if (!run) {
      setNotes(null);
      return;
    }
    const ctl = new AbortController();
    setNotesError(null);
    fetchNotes(run.id, ctl.signal).then(setNotes, (err) => !ctl.signal.aborted && setNotesError(errorText(err)));
    return () => ctl.abort();
  }, [run?.id]);

  // Another operator's runs and notes (and the echo of this page's own, which changes nothing),
  // each applied once, in order, against the run as the earlier pushes left it.
  const seen = useRef(0);
  useEffect(() => {
    let current = run;
    for (const p of pushed) {
      if (p.seq <= seen.current) continue;
      seen.current = p.seq;
      if ('run' in p) {
        if (p.run.endMs === null) current = p.run;
        else if (current?.id === p.run.id) current = null;
      } else if (current?.id === p.note.runId) {
        const note = p.note;
        setNotes((list) => (list === null || list.some((n) => n.id === note.id) ? list : [...list, note]));
      }
    }
    if (current !== run) setRun(current);
  }, [pushed]);

  const act = async (fn: () => Promise<void>) => {
    setBusy(true);
    setError(null);
    try {
      await fn();
    } catch (err) {
      setError(errorText(err));
    } finally {
      setBusy(false);
    }
  };

  const onStart = (e: FormEvent) => {
    e.preventDefault();
    void act(async () => {
      setRun(await startRun(benchId, title));
      setTitle('');
      setNotes([]);
    });
  };

  // Asked in the browser only: the stop route is the script API's (the contract), where a script means what it sends.
  const onStop = async (current: RunView) => {
    if (await askToConfirm(confirmStopRun(current.title))) {
      await act(async () => {
        await stopRun(current.id);
        setRun(null);
      });
    }
  };

  const onNote = (e: FormEvent) => {
    e.preventDefault();
    if (!run) return;
    void act(async () => {
      const note = await addNote(run.id, { body: text, snapshot: withSnapshot ? figures : null });
      setNotes((n) => (n?.some((x) => x.id === note.id) ? n : [...(n ?? []), note]));
      setText('');
    });
  };

  return (
    <section className="card" aria-labelledby="run-h">
      <h2 id="run-h" className="mb-2 font-semibold">Run &amp; notes</h2>
      {run ? (
        <div className="mb-3 flex flex-wrap items-start justify-between gap-2">
          <div>
            <a href={`/runs/${run.id}`} className="font-medium hover:underline" data-testid="active-run-title">{run.title}</a>
            <p className="text-xs text-muted">
              started <LocalTime ms={run.startMs} as="clock" className="figure" /> by {run.startedBy?.name ?? 'someone'} · running <span className="figure">{now === null ? '…' : formatDuration(now - run.startMs)}</span>
            </p>
          </div>
          {canOperate && (
            <button type="button" className="btn-danger" disabled={busy} onClick={() => void onStop(run)}>
              Stop run
            </button>
          )}
        </div>
      ) : canOperate ? (
        <form onSubmit={onStart} className="mb-3 flex flex-wrap items-end gap-2">
          <label className="min-w-0 flex-1">
            <span className="label">Run title</span>
            <input className="field" required maxLength={200} value={title} onChange={(e) => setTitle(e.target.value)} placeholder="e.g. Align arm 2 after mirror swap" />
          </label>
          <button type="submit" className="btn-primary" disabled={busy}>Start run</button>
        </form>
      ) : (
        <p className="mb-3 text-sm text-muted">No run in progress.</p>
      )}
      {error && <p className="mb-2 text-sm text-bad" role="alert">{error}</p>}
      {run && (
        <>
          {notesError ? (
            <p className="text-sm text-bad">Notes unavailable: {notesError}</p>
          ) : notes === null ? (
            <p className="text-sm text-muted">Loading notes…</p>
          ) : notes.length === 0 ? (
            <p className="text-sm text-muted">No notes yet.</p>
          ) : (
            <ol className="max-h-64 space-y-2 overflow-y-auto text-sm" aria-label="Notes">
              {notes.map((n) => (
                <li key={n.id} className="border-l-2 border-accent pl-2">
                  <p className="text-xs text-muted"><LocalTime ms={n.atMs} as="clock" className="figure" /> · {n.author?.name ?? 'someone'}</p>
                  <p className="whitespace-pre-wrap [overflow-wrap:anywhere]">{n.body}</p>
                  {n.snapshot && snapshotLines(n.snapshot).map((line, i) => <p key={i} className="figure text-xs text-muted">{line}</p>)}
                </li>
              ))}
            </ol>
          )}
          {canOperate && (
            <form onSubmit={onNote} className="mt-3 space-y-2">
              <label className="block">
                <span className="label">Note</span>
                <textarea className="field min-h-16" required maxLength={10000} value={text} onChange={(e) => setText(e.target.value)} />
              </label>
              <div className="flex flex-wrap items-center justify-between gap-2">
                <label className="flex items-center gap-2 text-sm">
                  <input type="checkbox" checked={withSnapshot} disabled={!figures} onChange={(e) => setWithSnapshot(e.target.checked)} />
                  Attach current figures
                </label>
                <button type="submit" className="btn" disabled={busy}>Add note</button>
              </div>
            </form>
          )}
        </>
      )}
    </section>
  );
}
